// The one Drizzle schema for Tiller. Migrations in drizzle/ are generated from it and run
// unchanged on PGlite (default) and on a PostgreSQL server (DATABASE_URL).
// Ids are random UUIDs so that no record can be reached by guessing a number; every
// lab-owned row carries lab_id (directly or through its session) for the access checks.
import { sql } from 'drizzle-orm'
import {
  bigint,
  bigserial,
  boolean,
  customType,
  date,
  doublePrecision,
  index,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  real,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from 'drizzle-orm/pg-core'

const bytea = customType<{ data: Uint8Array; driverData: Uint8Array }>({
  dataType: () => 'bytea',
})

const id = () => uuid('id').primaryKey().defaultRandom()
const createdAt = () => timestamp('created_at', { withTimezone: true }).notNull().defaultNow()
const ts = (name: string) => timestamp(name, { withTimezone: true })

export const roleEnum = pgEnum('role', ['supervisor', 'operator', 'participant', 'developer'])
export const handednessEnum = pgEnum('handedness', ['right', 'left', 'ambidextrous'])
export const consentStatusEnum = pgEnum('consent_status', ['pending', 'given', 'withdrawn'])
export const sessionStatusEnum = pgEnum('session_status', ['planned', 'live', 'ended', 'interrupted', 'imported'])
export const signoffStateEnum = pgEnum('signoff_state', ['pending', 'reviewed', 'flagged'])
export const runKindEnum = pgEnum('run_kind', ['calibration', 'feedback'])
export const runStatusEnum = pgEnum('run_status', ['pending', 'running', 'paused', 'stopped', 'completed', 'interrupted'])
export const trialOutcomeEnum = pgEnum('trial_outcome', ['pending', 'recorded', 'hit', 'miss', 'timeout'])
export const authTokenKindEnum = pgEnum('auth_token_kind', ['invite', 'reset'])

export const labs = pgTable('labs', {
  id: id(),
  name: text('name').notNull(),
  weeklyDigest: boolean('weekly_digest').notNull().default(false),
  createdAt: createdAt(),
})

export const users = pgTable(
  'users',
  {
    id: id(),
    labId: uuid('lab_id').notNull().references(() => labs.id),
    email: text('email').notNull(),
    name: text('name').notNull(),
    role: roleEnum('role').notNull(),
    passwordHash: text('password_hash'),
    /** Set for the participant role: the participant record this account may see. */
    participantId: uuid('participant_id'),
    active: boolean('active').notNull().default(true),
    createdAt: createdAt(),
    lastSignInAt: ts('last_sign_in_at'),
  },
  (t) => [uniqueIndex('users_email_unique').on(t.email)],
)

/** One-time links: invitations and password resets. Only the hash is stored. */
export const authTokens = pgTable('auth_tokens', {
  id: id(),
  userId: uuid('user_id').notNull().references(() => users.id),
  kind: authTokenKindEnum('kind').notNull(),
  tokenHash: text('token_hash').notNull().unique(),
  expiresAt: ts('expires_at').notNull(),
  usedAt: ts('used_at'),
  createdAt: createdAt(),
})

/** Failed sign-in and reset attempts, for throttling by e-mail and by address. */
export const signInAttempts = pgTable(
  'sign_in_attempts',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    key: text('key').notNull(),
    at: ts('at').notNull().defaultNow(),
  },
  (t) => [index('sign_in_attempts_key_at').on(t.key, t.at)],
)

/** Bearer tokens for the API, issued to developers. Only the hash is stored. */
export const apiTokens = pgTable('api_tokens', {
  id: id(),
  labId: uuid('lab_id').notNull().references(() => labs.id),
  userId: uuid('user_id').notNull().references(() => users.id),
  name: text('name').notNull(),
  prefix: text('prefix').notNull(),
  tokenHash: text('token_hash').notNull().unique(),
  createdAt: createdAt(),
  expiresAt: ts('expires_at'),
  revokedAt: ts('revoked_at'),
  lastUsedAt: ts('last_used_at'),
})

export const participants = pgTable(
  'participants',
  {
    id: id(),
    labId: uuid('lab_id').notNull().references(() => labs.id),
    /** Pseudonymous code; never a name. */
    code: text('code').notNull(),
    yearOfBirth: integer('year_of_birth'),
    handedness: handednessEnum('handedness').notNull().default('right'),
    consentDate: date('consent_date'),
    consentStatus: consentStatusEnum('consent_status').notNull().default('pending'),
    notes: text('notes').notNull().default(''),
    createdAt: createdAt(),
    updatedAt: ts('updated_at').notNull().defaultNow(),
  },
  (t) => [uniqueIndex('participants_lab_code').on(t.labId, t.code)],
)

/** A channel of a montage: its 10-20/10-10 label and a position on the unit sphere. */
export interface MontageChannel {
  name: string
  x: number
  y: number
  z: number
}

export const montages = pgTable('montages', {
  id: id(),
  labId: uuid('lab_id').notNull().references(() => labs.id),
  name: text('name').notNull(),
  channels: jsonb('channels').$type<MontageChannel[]>().notNull(),
  reference: text('reference').notNull().default(''),
  ground: text('ground').notNull().default(''),
  createdAt: createdAt(),
})

export const protocols = pgTable('protocols', {
  id: id(),
  labId: uuid('lab_id').notNull().references(() => labs.id),
  name: text('name').notNull(),
  classes: jsonb('classes').$type<string[]>().notNull(),
  fixationSeconds: real('fixation_seconds').notNull().default(2),
  cueSeconds: real('cue_seconds').notNull().default(1.25),
  imagerySeconds: real('imagery_seconds').notNull().default(4),
  restSeconds: real('rest_seconds').notNull().default(2),
  restJitterSeconds: real('rest_jitter_seconds').notNull().default(1),
  trialsPerClass: integer('trials_per_class').notNull().default(20),
  bandLowHz: real('band_low_hz').notNull().default(8),
  bandHighHz: real('band_high_hz').notNull().default(30),
  /** Epoch used for training, seconds after cue onset. */
  windowStartSeconds: real('window_start_seconds').notNull().default(0.5),
  windowEndSeconds: real('window_end_seconds').notNull().default(2.5),
  /** Length of the sliding band-power window used online. */
  decodingWindowSeconds: real('decoding_window_seconds').notNull().default(1),
  createdAt: createdAt(),
})

export const sessions = pgTable(
  'sessions',
  {
    id: id(),
    labId: uuid('lab_id').notNull().references(() => labs.id),
    participantId: uuid('participant_id').notNull().references(() => participants.id),
    operatorId: uuid('operator_id').references(() => users.id),
    protocolId: uuid('protocol_id').notNull().references(() => protocols.id),
    montageId: uuid('montage_id').notNull().references(() => montages.id),
    status: sessionStatusEnum('status').notNull().default('planned'),
    activeDecoderId: uuid('active_decoder_id'),
    notes: text('notes').notNull().default(''),
    /** Token for the participant's feedback link (hash only). */
    feedbackTokenHash: text('feedback_token_hash'),
    startedAt: ts('started_at'),
    endedAt: ts('ended_at'),
    createdAt: createdAt(),
    signoffState: signoffStateEnum('signoff_state').notNull().default('pending'),
    signedOffBy: uuid('signed_off_by').references(() => users.id),
    signedOffAt: ts('signed_off_at'),
    signoffComment: text('signoff_comment'),
    lockedAt: ts('locked_at'),
  },
  (t) => [index('sessions_lab_created').on(t.labId, t.createdAt)],
)

export const runs = pgTable(
  'runs',
  {
    id: id(),
    sessionId: uuid('session_id').notNull().references(() => sessions.id),
    kind: runKindEnum('kind').notNull(),
    index: integer('index').notNull(),
    status: runStatusEnum('status').notNull().default('pending'),
    /** Decoder applied during a feedback run. */
    decoderId: uuid('decoder_id'),
    /** 'live' for a device link, 'upload' for an imported recording. */
    source: text('source').notNull().default('live'),
    rateHz: real('rate_hz'),
    channels: jsonb('channels').$type<string[]>(),
    startedAt: ts('started_at'),
    endedAt: ts('ended_at'),
    sampleCount: bigint('sample_count', { mode: 'number' }).notNull().default(0),
    stats: jsonb('stats').$type<Record<string, unknown>>(),
    createdAt: createdAt(),
  },
  (t) => [index('runs_session').on(t.sessionId, t.index)],
)

/** Raw samples of a run, float32 little-endian interleaved (sample-major), in microvolts. */
export const recordingChunks = pgTable(
  'recording_chunks',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    runId: uuid('run_id').notNull().references(() => runs.id),
    firstSample: bigint('first_sample', { mode: 'number' }).notNull(),
    sampleCount: integer('sample_count').notNull(),
    channelCount: integer('channel_count').notNull(),
    data: bytea('data').notNull(),
  },
  (t) => [index('recording_chunks_run').on(t.runId, t.firstSample)],
)

export const trials = pgTable(
  'trials',
  {
    id: id(),
    runId: uuid('run_id').notNull().references(() => runs.id),
    index: integer('index').notNull(),
    label: text('label').notNull(),
    /** Sample index of cue onset in the run's sample clock. */
    cueSample: bigint('cue_sample', { mode: 'number' }),
    cueAt: ts('cue_at'),
    endSample: bigint('end_sample', { mode: 'number' }),
    outcome: trialOutcomeEnum('outcome').notNull().default('pending'),
    decidedClass: text('decided_class'),
  },
  (t) => [uniqueIndex('trials_run_index').on(t.runId, t.index)],
)

export const decisions = pgTable(
  'decisions',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    sessionId: uuid('session_id').notNull(),
    runId: uuid('run_id').notNull(),
    trialIndex: integer('trial_index'),
    /** Index of the last sample the decision used. */
    sample: bigint('sample', { mode: 'number' }).notNull(),
    receivedAt: ts('received_at').notNull(),
    output: doublePrecision('output').notNull(),
    probability: doublePrecision('probability').notNull(),
    decidedClass: text('decided_class').notNull(),
    cue: text('cue'),
    latencyUs: integer('latency_us').notNull(),
  },
  (t) => [index('decisions_run_sample').on(t.runId, t.sample), index('decisions_session').on(t.sessionId)],
)

/** Device and run events: connects, gaps, duplicates, protocol violations, markers. */
export const sessionEvents = pgTable(
  'session_events',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    sessionId: uuid('session_id').notNull(),
    runId: uuid('run_id'),
    at: ts('at').notNull().defaultNow(),
    kind: text('kind').notNull(),
    sample: bigint('sample', { mode: 'number' }),
    detail: jsonb('detail').$type<Record<string, unknown>>().notNull().default(sql`'{}'::jsonb`),
  },
  (t) => [index('session_events_session').on(t.sessionId, t.at)],
)

export const deviceTokens = pgTable('device_tokens', {
  id: id(),
  labId: uuid('lab_id').notNull().references(() => labs.id),
  sessionId: uuid('session_id').notNull().references(() => sessions.id),
  prefix: text('prefix').notNull(),
  tokenHash: text('token_hash').notNull().unique(),
  createdBy: uuid('created_by').references(() => users.id),
  createdAt: createdAt(),
  expiresAt: ts('expires_at').notNull(),
  revokedAt: ts('revoked_at'),
  lastUsedAt: ts('last_used_at'),
})

/** A trained decoder: the serialised engine object plus what it was trained on. */
export const decoders = pgTable(
  'decoders',
  {
    id: id(),
    labId: uuid('lab_id').notNull().references(() => labs.id),
    participantId: uuid('participant_id').notNull().references(() => participants.id),
    sessionId: uuid('session_id').references(() => sessions.id),
    version: integer('version').notNull(),
    method: text('method').notNull(),
    trainedOnRunIds: jsonb('trained_on_run_ids').$type<string[]>().notNull(),
    model: jsonb('model').$type<Record<string, unknown>>().notNull(),
    cvAccuracy: doublePrecision('cv_accuracy'),
    cvKappa: doublePrecision('cv_kappa'),
    comparison: jsonb('comparison').$type<unknown[]>(),
    createdBy: uuid('created_by').references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [index('decoders_participant').on(t.participantId, t.version)],
)

export const annotations = pgTable('annotations', {
  id: id(),
  sessionId: uuid('session_id').notNull().references(() => sessions.id),
  runId: uuid('run_id'),
  sample: bigint('sample', { mode: 'number' }),
  authorId: uuid('author_id').references(() => users.id),
  text: text('text').notNull(),
  /** True when added after sign-off as a correction of the locked record. */
  correction: boolean('correction').notNull().default(false),
  createdAt: createdAt(),
})

export const auditEvents = pgTable(
  'audit_events',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    labId: uuid('lab_id'),
    actorId: uuid('actor_id'),
    action: text('action').notNull(),
    target: text('target'),
    detail: jsonb('detail').$type<Record<string, unknown>>().notNull().default(sql`'{}'::jsonb`),
    ip: text('ip'),
    at: ts('at').notNull().defaultNow(),
  },
  (t) => [index('audit_events_lab_at').on(t.labId, t.at)],
)

/** Every e-mail Tiller sends; the local fake SMTP server stores what it receives here too. */
export const outbox = pgTable('outbox', {
  id: id(),
  labId: uuid('lab_id'),
  to: text('to').notNull(),
  from: text('from').notNull(),
  subject: text('subject').notNull(),
  text: text('text').notNull(),
  html: text('html'),
  messageId: text('message_id'),
  delivered: boolean('delivered').notNull().default(false),
  createdAt: createdAt(),
})
