// Review data for supervisors: the lab's session log (filters, sorting, server-side pagination,
// shared by the review table through /api/v1/sessions and by the API), a session's review with
// its metrics, participant progress, and sign-off. The filter schema is the same zod object on
// both paths, so the URL of the review page is a valid API query.
import { and, asc, count, desc, eq, gte, inArray, lt, sql, type SQL } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { annotations, auditEvents, type MontageChannel, decisions, decoders, montages, participants, protocols, recordingChunks, runs, sessionEvents, sessions, trials, users } from '~/db/schema'
import type { SessionUser } from '~/server/services'
import { isUuid } from '~/server/records.server'
import type { ComparisonRow, Decoder } from '~/engine/decoder'
import { positionFor } from '~/engine/montage'
import type { Recording } from '~/engine/recording'
import { accuracy, chanceLevel, cohenKappa, confusionMatrix, itrBitsPerMinute, itrBitsPerTrial } from '~/engine/metrics'

import { SESSION_SORTS, SESSION_STATUSES, SIGNOFF_STATES } from '~/components/session-table'

const optionalUuid = z.preprocess((v) => (v === '' ? undefined : v), z.string().uuid('must be an id from the filter list').optional())
const optionalDate = z.preprocess(
  (v) => (v === '' ? undefined : v),
  z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date as YYYY-MM-DD').optional(),
)
const optionalEnum = <T extends readonly [string, ...string[]]>(values: T) =>
  z.preprocess((v) => (v === '' ? undefined : v), z.enum(values).optional())

export const sessionLogQuery = z
  .object({
    participant: optionalUuid,
    operator: optionalUuid,
    protocol: optionalUuid,
    from: optionalDate,
    to: optionalDate,
    status: optionalEnum(SESSION_STATUSES),
    signoff: optionalEnum(SIGNOFF_STATES),
    sort: z.enum(SESSION_SORTS).default('created'),
    dir: z.enum(['asc', 'desc']).default('desc'),
    page: z.coerce.number().int().min(1).max(100_000).default(1),
    pageSize: z.coerce.number().int().min(1).max(200).default(25),
  })
  .refine((q) => !q.from || !q.to || q.from <= q.to, { message: "'from' must not be after 'to'", path: ['from'] })

export type SessionLogQuery = z.infer<typeof sessionLogQuery>

export interface SessionLogRow {
  id: string
  participantId: string
  participantCode: string
  operatorName: string | null
  protocolName: string
  status: (typeof SESSION_STATUSES)[number]
  signoffState: (typeof SIGNOFF_STATES)[number]
  locked: boolean
  createdAt: string
  startedAt: string | null
  endedAt: string | null
  runCount: number
  /** hits / (hits + misses + timeouts) over the session's feedback trials; null without any */
  feedbackAccuracy: number | null
  feedbackTrials: number
}

export interface SessionLogPage {
  rows: SessionLogRow[]
  total: number
  page: number
  pageSize: number
  pageCount: number
}

/** Parses URLSearchParams into the query, or returns the zod error messages by field. */
export function parseSessionLogQuery(params: URLSearchParams): { ok: true; query: SessionLogQuery } | { ok: false; errors: Record<string, string> } {
  const parsed = sessionLogQuery.safeParse(Object.fromEntries(params))
  if (parsed.success) return { ok: true, query: parsed.data }
  const errors: Record<string, string> = {}
  for (const issue of parsed.error.issues) errors[String(issue.path[0] ?? 'query')] ??= issue.message
  return { ok: false, errors }
}

function dayAfter(isoDate: string): Date {
  const d = new Date(`${isoDate}T00:00:00Z`)
  d.setUTCDate(d.getUTCDate() + 1)
  return d
}

export async function listSessions(db: Database, labId: string, q: SessionLogQuery, only?: { participantId?: string }): Promise<SessionLogPage> {
  const where: SQL[] = [eq(sessions.labId, labId)]
  if (only?.participantId) where.push(eq(sessions.participantId, only.participantId))
  if (q.participant) where.push(eq(sessions.participantId, q.participant))
  if (q.operator) where.push(eq(sessions.operatorId, q.operator))
  if (q.protocol) where.push(eq(sessions.protocolId, q.protocol))
  if (q.status) where.push(eq(sessions.status, q.status))
  if (q.signoff) where.push(eq(sessions.signoffState, q.signoff))
  // Dates filter on the session's creation day (UTC), 'to' inclusive.
  if (q.from) where.push(gte(sessions.createdAt, new Date(`${q.from}T00:00:00Z`)))
  if (q.to) where.push(lt(sessions.createdAt, dayAfter(q.to)))
  const condition = and(...where)

  const sortColumn = {
    created: sessions.createdAt,
    started: sessions.startedAt,
    participant: participants.code,
    operator: users.name,
    protocol: protocols.name,
    status: sessions.status,
    signoff: sessions.signoffState,
  }[q.sort]
  const order = q.dir === 'asc' ? asc(sortColumn) : desc(sortColumn)

  const [{ n: total }] = await db.select({ n: count() }).from(sessions).where(condition)
  const pageCount = Math.max(1, Math.ceil(total / q.pageSize))
  const page = Math.min(q.page, pageCount)

  const runCount = db
    .select({ sessionId: runs.sessionId, n: count().as('run_n') })
    .from(runs)
    .groupBy(runs.sessionId)
    .as('run_counts')
  const feedback = db
    .select({
      sessionId: runs.sessionId,
      hits: sql<number>`count(*) filter (where ${trials.outcome} = 'hit')`.mapWith(Number).as('hits'),
      scored: sql<number>`count(*) filter (where ${trials.outcome} in ('hit', 'miss', 'timeout'))`.mapWith(Number).as('scored'),
    })
    .from(trials)
    .innerJoin(runs, eq(runs.id, trials.runId))
    .where(eq(runs.kind, 'feedback'))
    .groupBy(runs.sessionId)
    .as('feedback_scores')

  const rows = await db
    .select({
      id: sessions.id,
      participantId: sessions.participantId,
      participantCode: participants.code,
      operatorName: users.name,
      protocolName: protocols.name,
      status: sessions.status,
      signoffState: sessions.signoffState,
      lockedAt: sessions.lockedAt,
      createdAt: sessions.createdAt,
      startedAt: sessions.startedAt,
      endedAt: sessions.endedAt,
      runCount: runCount.n,
      hits: feedback.hits,
      scored: feedback.scored,
    })
    .from(sessions)
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .leftJoin(users, eq(users.id, sessions.operatorId))
    .leftJoin(runCount, eq(runCount.sessionId, sessions.id))
    .leftJoin(feedback, eq(feedback.sessionId, sessions.id))
    .where(condition)
    // The id breaks ties so pages never overlap or skip rows.
    .orderBy(order, asc(sessions.id))
    .limit(q.pageSize)
    .offset((page - 1) * q.pageSize)

  return {
    rows: rows.map((r) => ({
      id: r.id,
      participantId: r.participantId,
      participantCode: r.participantCode,
      operatorName: r.operatorName,
      protocolName: r.protocolName,
      status: r.status,
      signoffState: r.signoffState,
      locked: r.lockedAt !== null,
      createdAt: r.createdAt.toISOString(),
      startedAt: r.startedAt?.toISOString() ?? null,
      endedAt: r.endedAt?.toISOString() ?? null,
      runCount: Number(r.runCount ?? 0),
      feedbackTrials: Number(r.scored ?? 0),
      feedbackAccuracy: r.scored ? Number(r.hits) / Number(r.scored) : null,
    })),
    total,
    page,
    pageSize: q.pageSize,
    pageCount,
  }
}

/** Choices for the filter controls: the lab's participants, operators and protocols. */
export async function sessionLogFilterOptions(db: Database, labId: string) {
  const [ps, ops, protos] = await Promise.all([
    db.select({ id: participants.id, label: participants.code }).from(participants).where(eq(participants.labId, labId)).orderBy(asc(participants.code)),
    db
      .select({ id: users.id, label: users.name })
      .from(users)
      .where(and(eq(users.labId, labId), eq(users.role, 'operator')))
      .orderBy(asc(users.name)),
    db.select({ id: protocols.id, label: protocols.name }).from(protocols).where(eq(protocols.labId, labId)).orderBy(asc(protocols.name)),
  ])
  return { participants: ps, operators: ops, protocols: protos }
}

// ---------------------------------------------------------------------------------------------
// Session review: runs, trials, decisions, metrics, events, signal quality.

export interface RunMetrics {
  classes: string[]
  /** Trials with a decided class (hits and misses); timeouts have none. */
  decided: number
  timeouts: number
  accuracy: number
  kappa: number
  /** confusion[true][predicted], over the decided trials */
  confusion: number[][]
  /** binomial chance level at alpha = 0.05 for the decided trial count (Müller-Putz et al. 2008) */
  chanceLevel: number
  itrBitsPerTrial: number
  itrBitsPerMinute: number
  secondsPerTrial: number
}

export interface TrialRow {
  index: number
  label: string
  cueSample: number | null
  endSample: number | null
  outcome: string
  decidedClass: string | null
}

/**
 * The field's figures for a feedback run, all from app/engine/metrics.ts (checked there against
 * scikit-learn and the Wolpaw formula). Scored over the trials that had a decided class; the
 * timeouts are reported beside them. Null when no trial was decided.
 */
export function feedbackRunMetrics(classes: string[], trialRows: TrialRow[], secondsPerTrial: number): RunMetrics | null {
  const decided = trialRows.filter((t) => (t.outcome === 'hit' || t.outcome === 'miss') && t.decidedClass !== null && classes.includes(t.decidedClass) && classes.includes(t.label))
  const timeouts = trialRows.filter((t) => t.outcome === 'timeout').length
  if (decided.length === 0 || classes.length < 2) return null
  const truth = decided.map((t) => classes.indexOf(t.label))
  const predicted = decided.map((t) => classes.indexOf(t.decidedClass as string))
  const acc = accuracy(truth, predicted)
  return {
    classes,
    decided: decided.length,
    timeouts,
    accuracy: acc,
    kappa: cohenKappa(truth, predicted, classes.length),
    confusion: confusionMatrix(truth, predicted, classes.length),
    chanceLevel: chanceLevel(decided.length, classes.length, 0.05),
    itrBitsPerTrial: itrBitsPerTrial(classes.length, acc),
    itrBitsPerMinute: itrBitsPerMinute(classes.length, acc, secondsPerTrial),
    secondsPerTrial,
  }
}

/** Seconds per selection: the mean cue-to-cue interval, else the protocol's nominal trial length. */
export function secondsPerTrialOf(trialRows: TrialRow[], rateHz: number | null, protocol: { fixationSeconds: number; cueSeconds: number; imagerySeconds: number; restSeconds: number; restJitterSeconds: number }): number {
  const cues = trialRows.map((t) => t.cueSample).filter((s): s is number => s !== null).sort((a, b) => a - b)
  if (rateHz && cues.length >= 2) return (cues[cues.length - 1] - cues[0]) / (cues.length - 1) / rateHz
  return protocol.fixationSeconds + protocol.cueSeconds + protocol.imagerySeconds + protocol.restSeconds + protocol.restJitterSeconds / 2
}

export interface LatencySummary {
  count: number
  p50Ms: number | null
  p99Ms: number | null
  maxMs: number | null
  /** Histogram over [edgesMs[i], edgesMs[i+1]); the last bin holds everything above. */
  edgesMs: number[]
  counts: number[]
}

function quantile(sorted: number[], q: number): number {
  const i = Math.min(sorted.length - 1, Math.max(0, Math.ceil(q * sorted.length) - 1))
  return sorted[i]
}

export function latencySummary(latenciesUs: number[], binCount = 24): LatencySummary {
  if (latenciesUs.length === 0) return { count: 0, p50Ms: null, p99Ms: null, maxMs: null, edgesMs: [], counts: [] }
  const ms = latenciesUs.map((u) => u / 1000).sort((a, b) => a - b)
  // The range ends at the 99.5th percentile so one stall does not flatten the histogram.
  const top = Math.max(quantile(ms, 0.995), 0.01)
  const width = top / binCount
  const edgesMs = Array.from({ length: binCount + 1 }, (_, i) => i * width)
  const counts = new Array<number>(binCount + 1).fill(0)
  for (const v of ms) counts[Math.min(binCount, Math.floor(v / width))]++
  return { count: ms.length, p50Ms: quantile(ms, 0.5), p99Ms: quantile(ms, 0.99), maxMs: ms[ms.length - 1], edgesMs, counts }
}

export interface ChannelQuality {
  name: string
  rmsUv: number
  peakToPeakUv: number
  state: 'good' | 'flat' | 'noisy'
}

/** Standard deviation limits for the per-channel summary (common practice; values from memory). */
export const QUALITY_LIMITS = { flatBelowUv: 0.5, noisyAboveUv: 100 }

/** Per-channel RMS (about the mean) and range, accumulated block by block (sample-major float32). */
export function createQualityAccumulator(names: string[]) {
  const C = names.length
  const sum = new Float64Array(C)
  const sumSq = new Float64Array(C)
  const min = new Float64Array(C).fill(Infinity)
  const max = new Float64Array(C).fill(-Infinity)
  let n = 0
  return {
    add(block: Float32Array): void {
      const samples = Math.floor(block.length / C)
      for (let s = 0; s < samples; s++) {
        for (let c = 0; c < C; c++) {
          const v = block[s * C + c]
          sum[c] += v
          sumSq[c] += v * v
          if (v < min[c]) min[c] = v
          if (v > max[c]) max[c] = v
        }
      }
      n += samples
    },
    result(): ChannelQuality[] {
      return names.map((name, c) => {
        const mean = n ? sum[c] / n : 0
        const rms = n ? Math.sqrt(Math.max(0, sumSq[c] / n - mean * mean)) : 0
        const state = rms < QUALITY_LIMITS.flatBelowUv ? 'flat' : rms > QUALITY_LIMITS.noisyAboveUv ? 'noisy' : 'good'
        return { name, rmsUv: rms, peakToPeakUv: n ? max[c] - min[c] : 0, state }
      })
    },
  }
}

export function channelQuality(names: string[], blocks: Iterable<Float32Array>): ChannelQuality[] {
  const acc = createQualityAccumulator(names)
  for (const block of blocks) acc.add(block)
  return acc.result()
}

/** The float32 samples of a stored chunk (bytea, little-endian), without copying when aligned. */
export function chunkSamples(data: Uint8Array): Float32Array {
  if (data.byteOffset % 4 === 0) return new Float32Array(data.buffer, data.byteOffset, data.byteLength >> 2)
  const copy = new Uint8Array(data.byteLength)
  copy.set(data)
  return new Float32Array(copy.buffer, 0, copy.byteLength >> 2)
}

/** Largest number of recording values read for the quality summary of one run. */
const QUALITY_VALUE_BUDGET = 4_000_000

async function runQuality(db: Database, run: { id: string; channels: string[] | null }): Promise<ChannelQuality[] | null> {
  if (!run.channels?.length) return null
  const chunks = await db
    .select({ id: recordingChunks.id, sampleCount: recordingChunks.sampleCount, channelCount: recordingChunks.channelCount })
    .from(recordingChunks)
    .where(eq(recordingChunks.runId, run.id))
    .orderBy(asc(recordingChunks.firstSample))
  if (chunks.length === 0) return null
  const values = chunks.reduce((a, c) => a + c.sampleCount * c.channelCount, 0)
  // Long runs: an even spread of chunks within the budget, so the page stays fast.
  const stride = Math.max(1, Math.ceil(values / QUALITY_VALUE_BUDGET))
  const picked = chunks.filter((_, i) => i % stride === 0).map((c) => c.id)
  // Small pages: the database round trip between them lets the event loop serve ingest and streams.
  const acc = createQualityAccumulator(run.channels)
  for (let i = 0; i < picked.length; i += 40) {
    const rows = await db.select({ data: recordingChunks.data }).from(recordingChunks).where(inArray(recordingChunks.id, picked.slice(i, i + 40)))
    for (const r of rows) acc.add(chunkSamples(r.data))
  }
  return acc.result()
}

/** At most this many points of the classifier output go to the timeline of one run. */
export const TIMELINE_POINTS = 4000

export async function sessionReview(db: Database, sessionId: string) {
  const [head] = await db
    .select({ session: sessions, participant: participants, protocol: protocols, montage: montages, operatorName: users.name })
    .from(sessions)
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .innerJoin(montages, eq(montages.id, sessions.montageId))
    .leftJoin(users, eq(users.id, sessions.operatorId))
    .where(eq(sessions.id, sessionId))
  if (!head) return null
  const { session, participant, protocol, montage } = head
  const runRows = await db.select().from(runs).where(eq(runs.sessionId, sessionId)).orderBy(asc(runs.index))
  const runIds = runRows.map((r) => r.id)
  const [trialRows, eventRows, annotationRows, decoderRows, signer] = await Promise.all([
    runIds.length ? db.select().from(trials).where(inArray(trials.runId, runIds)).orderBy(asc(trials.index)) : Promise.resolve([]),
    db.select().from(sessionEvents).where(eq(sessionEvents.sessionId, sessionId)).orderBy(asc(sessionEvents.at)),
    db
      .select({ annotation: annotations, authorName: users.name })
      .from(annotations)
      .leftJoin(users, eq(users.id, annotations.authorId))
      .where(eq(annotations.sessionId, sessionId))
      .orderBy(asc(annotations.createdAt)),
    db
      .select({ id: decoders.id, version: decoders.version, method: decoders.method, cvAccuracy: decoders.cvAccuracy, cvKappa: decoders.cvKappa, createdAt: decoders.createdAt, sessionId: decoders.sessionId })
      .from(decoders)
      .where(eq(decoders.participantId, participant.id))
      .orderBy(asc(decoders.version)),
    session.signedOffBy ? db.select({ name: users.name }).from(users).where(eq(users.id, session.signedOffBy)) : Promise.resolve([]),
  ])

  const runsOut = []
  for (const run of runRows) {
    const runTrials: TrialRow[] = trialRows
      .filter((t) => t.runId === run.id)
      .map((t) => ({ index: t.index, label: t.label, cueSample: t.cueSample, endSample: t.endSample, outcome: t.outcome, decidedClass: t.decidedClass }))
    const decoder = decoderRows.find((d) => d.id === run.decoderId) ?? null
    // PGlite answers on this thread: let ingest and streams run between the queries of a review.
    await new Promise((resolve) => setImmediate(resolve))
    const [{ n: decisionCount }] = await db.select({ n: count() }).from(decisions).where(eq(decisions.runId, run.id))
    const stride = Math.max(1, Math.ceil(decisionCount / TIMELINE_POINTS))
    // The timeline is thinned in the database, so a long log never crosses over whole.
    const numbered = db
      .select({
        sample: decisions.sample,
        output: decisions.output,
        decidedClass: decisions.decidedClass,
        position: sql<number>`row_number() over (order by ${decisions.sample}) - 1`.as('position'),
      })
      .from(decisions)
      .where(eq(decisions.runId, run.id))
      .as('numbered')
    const shown = decisionCount
      ? await db
          .select({ sample: numbered.sample, output: numbered.output, decidedClass: numbered.decidedClass })
          .from(numbered)
          .where(sql`${numbered.position} % ${stride} = 0`)
          .orderBy(asc(numbered.sample))
      : []
    await new Promise((resolve) => setImmediate(resolve))
    const latencyRows = decisionCount ? await db.select({ latencyUs: decisions.latencyUs }).from(decisions).where(eq(decisions.runId, run.id)) : []
    const classes = protocol.classes
    const secondsPerTrial = secondsPerTrialOf(runTrials, run.rateHz, protocol)
    runsOut.push({
      id: run.id,
      kind: run.kind,
      index: run.index,
      status: run.status,
      source: run.source,
      rateHz: run.rateHz,
      channels: run.channels ?? [],
      sampleCount: run.sampleCount,
      startedAt: run.startedAt?.toISOString() ?? null,
      endedAt: run.endedAt?.toISOString() ?? null,
      decoder: decoder ? { id: decoder.id, version: decoder.version, method: decoder.method, cvAccuracy: decoder.cvAccuracy } : null,
      trials: runTrials,
      metrics: run.kind === 'feedback' ? feedbackRunMetrics(classes, runTrials, secondsPerTrial) : null,
      decisionCount,
      timeline: {
        sample: shown.map((d) => d.sample),
        output: shown.map((d) => d.output),
        decided: shown.map((d) => classes.indexOf(d.decidedClass)),
      },
      latency: latencySummary(latencyRows.map((d) => d.latencyUs)),
      quality: await runQuality(db, run),
    })
  }

  return {
    session: {
      id: session.id,
      status: session.status,
      notes: session.notes,
      createdAt: session.createdAt.toISOString(),
      startedAt: session.startedAt?.toISOString() ?? null,
      endedAt: session.endedAt?.toISOString() ?? null,
      signoffState: session.signoffState,
      signoffComment: session.signoffComment,
      signedOffAt: session.signedOffAt?.toISOString() ?? null,
      signedOffBy: signer[0]?.name ?? null,
      lockedAt: session.lockedAt?.toISOString() ?? null,
      operatorName: head.operatorName,
      activeDecoderId: session.activeDecoderId,
    },
    participant: { id: participant.id, code: participant.code, handedness: participant.handedness },
    protocol: { id: protocol.id, name: protocol.name, classes: protocol.classes },
    montage: { id: montage.id, name: montage.name, channels: montage.channels },
    runs: runsOut,
    events: eventRows.map((e) => ({ id: e.id, runId: e.runId, kind: e.kind, sample: e.sample, at: e.at.toISOString(), detail: e.detail })),
    annotations: annotationRows.map(({ annotation: a, authorName }) => ({
      id: a.id,
      runId: a.runId,
      sample: a.sample,
      text: a.text,
      correction: a.correction,
      authorName,
      createdAt: a.createdAt.toISOString(),
    })),
    decoders: decoderRows.map((d) => ({ ...d, createdAt: d.createdAt.toISOString() })),
  }
}

export type SessionReview = NonNullable<Awaited<ReturnType<typeof sessionReview>>>

// ---------------------------------------------------------------------------------------------
// Sign-off and annotations. Sign-off locks the session's record; from then on an annotation is
// stored as a correction (correction = true) and the original record stays as it was.

export const signoffForm = z.object({
  intent: z.literal('signoff'),
  state: z.enum(['reviewed', 'flagged'], { message: 'Choose reviewed or flagged' }),
  comment: z.string().trim().max(2000, 'Keep the comment under 2000 characters'),
}).refine((f) => f.state !== 'flagged' || f.comment.length > 0, { message: 'Say why the session is flagged', path: ['comment'] })

export const annotationForm = z.object({
  intent: z.literal('annotate'),
  text: z.string().trim().min(1, 'Write the annotation').max(2000, 'Keep the annotation under 2000 characters'),
  runId: z.preprocess((v) => (v === '' ? undefined : v), z.string().uuid().optional()),
  sample: z.preprocess((v) => (v === '' ? undefined : v), z.coerce.number().int().min(0).optional()),
})

export class ReviewError extends Error {}

/** Sessions that can be signed off: the record is complete. */
const SIGNABLE = new Set(['ended', 'interrupted', 'imported'])

export async function signOffSession(
  db: Database,
  actor: SessionUser,
  sessionId: string,
  input: { state: 'reviewed' | 'flagged'; comment: string },
  ip: string | null,
) {
  if (actor.role !== 'supervisor') throw new ReviewError('Only a supervisor can sign off a session.')
  return db.transaction(async (tx) => {
    const [row] = await tx.select().from(sessions).where(and(eq(sessions.id, sessionId), eq(sessions.labId, actor.labId))).for('update')
    if (!row) throw new ReviewError('No such session.')
    if (!SIGNABLE.has(row.status)) throw new ReviewError(`A ${row.status} session cannot be signed off; end it first.`)
    const now = new Date()
    const [updated] = await tx
      .update(sessions)
      .set({ signoffState: input.state, signoffComment: input.comment || null, signedOffBy: actor.id, signedOffAt: now, lockedAt: row.lockedAt ?? now })
      .where(eq(sessions.id, sessionId))
      .returning()
    await tx.insert(auditEvents).values({
      labId: actor.labId,
      actorId: actor.id,
      action: 'session.signoff',
      target: sessionId,
      detail: { state: input.state, comment: input.comment, previousState: row.signoffState, previousComment: row.signoffComment, locked: true },
      ip,
    })
    return updated
  })
}

export async function addReviewAnnotation(
  db: Database,
  actor: SessionUser,
  sessionId: string,
  input: { text: string; runId?: string; sample?: number },
  ip: string | null,
) {
  return db.transaction(async (tx) => {
    const [row] = await tx.select().from(sessions).where(and(eq(sessions.id, sessionId), eq(sessions.labId, actor.labId)))
    if (!row) throw new ReviewError('No such session.')
    if (input.runId) {
      const [run] = await tx.select({ id: runs.id }).from(runs).where(and(eq(runs.id, input.runId), eq(runs.sessionId, sessionId)))
      if (!run) throw new ReviewError('That run is not part of this session.')
    }
    const correction = row.lockedAt !== null
    const [created] = await tx
      .insert(annotations)
      .values({ sessionId, runId: input.runId ?? null, sample: input.sample ?? null, authorId: actor.id, text: input.text, correction })
      .returning()
    await tx.insert(auditEvents).values({
      labId: actor.labId,
      actorId: actor.id,
      action: correction ? 'annotation.correction' : 'annotation.add',
      target: sessionId,
      detail: { annotationId: created.id, runId: input.runId ?? null, text: input.text },
      ip,
    })
    return created
  })
}

// ---------------------------------------------------------------------------------------------
// Participant progress: feedback accuracy and kappa across sessions, oldest first.

export interface ProgressPoint {
  sessionId: string
  date: string
  status: string
  feedbackTrials: number
  accuracy: number | null
  kappa: number | null
  itrBitsPerTrial: number | null
  /** Cross-validated accuracy of the best decoder trained in that session. */
  decoderCvAccuracy: number | null
}

export async function participantProgress(db: Database, labId: string, participantId: string) {
  if (!isUuid(participantId)) return null
  const [participant] = await db.select().from(participants).where(and(eq(participants.id, participantId), eq(participants.labId, labId)))
  if (!participant) return null
  const sessionRows = await db
    .select({ id: sessions.id, createdAt: sessions.createdAt, startedAt: sessions.startedAt, status: sessions.status, classes: protocols.classes })
    .from(sessions)
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .where(and(eq(sessions.participantId, participantId), eq(sessions.labId, labId)))
    .orderBy(asc(sessions.createdAt))
  const ids = sessionRows.map((s) => s.id)
  const [trialRows, decoderRows] = ids.length
    ? await Promise.all([
        db
          .select({ sessionId: runs.sessionId, label: trials.label, outcome: trials.outcome, decidedClass: trials.decidedClass, index: trials.index, cueSample: trials.cueSample, endSample: trials.endSample })
          .from(trials)
          .innerJoin(runs, eq(runs.id, trials.runId))
          .where(and(inArray(runs.sessionId, ids), eq(runs.kind, 'feedback'))),
        db.select({ sessionId: decoders.sessionId, cvAccuracy: decoders.cvAccuracy }).from(decoders).where(eq(decoders.participantId, participantId)),
      ])
    : [[], []]
  const points: ProgressPoint[] = sessionRows.map((s) => {
    const mine = trialRows.filter((t) => t.sessionId === s.id)
    // Cue spacing differs per run, so ITR per minute is left to the session page.
    const m = feedbackRunMetrics(s.classes, mine, 1)
    const cv = decoderRows.filter((d) => d.sessionId === s.id && d.cvAccuracy !== null).map((d) => d.cvAccuracy as number)
    return {
      sessionId: s.id,
      date: (s.startedAt ?? s.createdAt).toISOString(),
      status: s.status,
      feedbackTrials: mine.filter((t) => t.outcome === 'hit' || t.outcome === 'miss' || t.outcome === 'timeout').length,
      accuracy: m?.accuracy ?? null,
      kappa: m?.kappa ?? null,
      itrBitsPerTrial: m?.itrBitsPerTrial ?? null,
      decoderCvAccuracy: cv.length ? Math.max(...cv) : null,
    }
  })
  return { participant: { id: participant.id, code: participant.code }, points }
}

/** A run's trials and figures, for the API (no timeline, no signal-quality pass). */
export async function runFigures(db: Database, runId: string) {
  const [row] = await db.select({ run: runs, protocol: protocols }).from(runs).innerJoin(sessions, eq(sessions.id, runs.sessionId)).innerJoin(protocols, eq(protocols.id, sessions.protocolId)).where(eq(runs.id, runId))
  if (!row) return null
  const trialRows: TrialRow[] = await db
    .select({ index: trials.index, label: trials.label, cueSample: trials.cueSample, endSample: trials.endSample, outcome: trials.outcome, decidedClass: trials.decidedClass })
    .from(trials)
    .where(eq(trials.runId, runId))
    .orderBy(asc(trials.index))
  const latencies = await db.select({ us: decisions.latencyUs }).from(decisions).where(eq(decisions.runId, runId))
  const { edgesMs: _e, counts: _c, ...latency } = latencySummary(latencies.map((l) => l.us))
  return {
    trials: trialRows,
    metrics: row.run.kind === 'feedback' ? feedbackRunMetrics(row.protocol.classes, trialRows, secondsPerTrialOf(trialRows, row.run.rateHz, row.protocol)) : null,
    latency,
  }
}

// ---------------------------------------------------------------------------------------------
// Decoder review: patterns for scalp maps, per-class spectra of its components, folds, comparison.

/** Spectrum of x (one epoch) at the given frequencies: Hann-windowed periodogram, µV²/Hz. */
export function periodogram(x: Float64Array, rateHz: number, freqs: number[]): number[] {
  const n = x.length
  let mean = 0
  for (let i = 0; i < n; i++) mean += x[i]
  mean /= n
  const w = new Float64Array(n)
  let wSq = 0
  for (let i = 0; i < n; i++) {
    // Periodic Hann, as scipy.signal.get_window('hann', n) uses for spectral estimates.
    w[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / n)
    wSq += w[i] * w[i]
  }
  return freqs.map((f) => {
    let re = 0
    let im = 0
    const step = (2 * Math.PI * f) / rateHz
    for (let i = 0; i < n; i++) {
      const v = (x[i] - mean) * w[i]
      re += v * Math.cos(step * i)
      im -= v * Math.sin(step * i)
    }
    // One-sided density, as scipy.signal.periodogram(window='hann', scaling='density').
    return (2 * (re * re + im * im)) / (rateHz * wSq)
  })
}

export interface ClassSpectra {
  component: string
  /** mean log10 power per class at `freqs` */
  perClass: { label: string; trials: number; log10Power: number[] }[]
}

/** Per-class mean log spectra of the decoder's first and last components over the epochs of `recording`. */
export function componentSpectra(decoder: Decoder, recording: Recording, maxHz = 40): { freqs: number[]; spectra: ClassSpectra[] } {
  const from = Math.round(decoder.epoch[0] * recording.rateHz)
  const to = Math.round(decoder.epoch[1] * recording.rateHz)
  const n = to - from
  const df = recording.rateHz / n
  const freqs: number[] = []
  for (let f = df; f <= Math.min(maxHz, recording.rateHz / 2); f += df) freqs.push(Math.round(f * 1000) / 1000)
  const index = decoder.channels.map((c) => recording.channels.indexOf(c))
  if (index.some((i) => i < 0) || n < 8) return { freqs: [], spectra: [] }
  const picks = decoder.filters.length > 1 ? [0, decoder.filters.length - 1] : [0]
  const total = recording.data[0].length
  const spectra = picks.map((k) => {
    const w = decoder.filters[k]
    const perClass = decoder.classes.map((label) => {
      const sum = new Array<number>(freqs.length).fill(0)
      let count = 0
      for (const cue of recording.cues) {
        if (cue.label !== label || cue.sample + to > total) continue
        const y = new Float64Array(n)
        for (let s = 0; s < n; s++) {
          let v = 0
          for (let c = 0; c < w.length; c++) v += w[c] * recording.data[index[c]][cue.sample + from + s]
          y[s] = v
        }
        periodogram(y, recording.rateHz, freqs).forEach((p, i) => (sum[i] += Math.log10(Math.max(p, 1e-30))))
        count++
      }
      return { label, trials: count, log10Power: sum.map((v) => (count ? v / count : NaN)) }
    })
    return { component: decoder.componentNames[k] ?? `component ${k + 1}`, perClass }
  })
  return { freqs, spectra }
}

export async function decoderReview(db: Database, labId: string, decoderId: string, loadRecording: (runId: string) => Promise<Recording>) {
  if (!isUuid(decoderId)) return null
  const [row] = await db
    .select({ decoder: decoders, participantCode: participants.code })
    .from(decoders)
    .innerJoin(participants, eq(participants.id, decoders.participantId))
    .where(and(eq(decoders.id, decoderId), eq(decoders.labId, labId)))
  if (!row) return null
  const model = row.decoder.model as unknown as Decoder
  // Positions from the session's montage, else the 10-10 template by name.
  let montageChannels: MontageChannel[] = []
  if (row.decoder.sessionId) {
    const [m] = await db.select({ channels: montages.channels }).from(sessions).innerJoin(montages, eq(montages.id, sessions.montageId)).where(eq(sessions.id, row.decoder.sessionId))
    montageChannels = m?.channels ?? []
  }
  const positions = model.channels.map((name) => {
    const p = montageChannels.find((c) => c.name.toLowerCase() === name.toLowerCase()) ?? positionFor(name)
    return p ? { x: p.x, y: p.y, z: p.z } : null
  })
  let spectra: ReturnType<typeof componentSpectra> = { freqs: [], spectra: [] }
  let spectraError: string | null = null
  const runId = row.decoder.trainedOnRunIds[0]
  if (runId) {
    try {
      spectra = componentSpectra(model, await loadRecording(runId))
    } catch (error) {
      spectraError = (error as Error).message
    }
  }
  const siblings = await db
    .select({ id: decoders.id, version: decoders.version, method: decoders.method, cvAccuracy: decoders.cvAccuracy })
    .from(decoders)
    .where(eq(decoders.participantId, row.decoder.participantId))
    .orderBy(asc(decoders.version))
  return {
    decoder: {
      id: row.decoder.id,
      version: row.decoder.version,
      method: row.decoder.method,
      sessionId: row.decoder.sessionId,
      participantId: row.decoder.participantId,
      participantCode: row.participantCode,
      createdAt: row.decoder.createdAt.toISOString(),
      trainedOnRunIds: row.decoder.trainedOnRunIds,
    },
    model: {
      channels: model.channels,
      classes: model.classes,
      band: model.band,
      epoch: model.epoch,
      windowSeconds: model.windowSeconds,
      rateHz: model.rateHz,
      componentNames: model.componentNames,
      componentBands: model.componentBands,
      patterns: model.patterns,
      cv: model.cv,
      trialCount: model.trialCount,
    },
    positions,
    comparison: (row.decoder.comparison as ComparisonRow[] | null) ?? null,
    spectra,
    spectraError,
    siblings,
  }
}
