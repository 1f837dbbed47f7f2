// Participants of a lab: pseudonymous codes, year of birth, handedness, consent and notes.
// Every query is scoped to the user's lab; create and edit are audited.
import { and, asc, count, desc, eq, ilike, or, sql } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { participants, sessions } from '~/db/schema'
import { audit } from '~/server/audit.server'
import { isUniqueViolation, isUuid, notFound } from '~/server/records.server'
import type { SessionUser } from '~/server/services'

export const HANDEDNESS = ['right', 'left', 'ambidextrous'] as const
export const CONSENT_STATUSES = ['pending', 'given', 'withdrawn'] as const

const emptyToUndefined = (v: unknown) => (typeof v === 'string' && v.trim() === '' ? undefined : v)

/** True for a real day: 2026-02-30 parses in JavaScript (as 2 March) but is not one. */
function isCalendarDate(iso: string): boolean {
  const d = new Date(`${iso}T00:00:00Z`)
  return !Number.isNaN(d.getTime()) && d.toISOString().slice(0, 10) === iso
}

/** ISO date of today in UTC, for "not in the future" checks. */
function todayIso(): string {
  return new Date().toISOString().slice(0, 10)
}

export const participantSchema = z
  .object({
    code: z
      .string()
      .trim()
      .min(2, 'Give a code of at least 2 characters')
      .max(32, 'Keep the code to 32 characters')
      .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'Use letters, digits, dot, dash or underscore (a pseudonymous code, never a name)'),
    yearOfBirth: z.preprocess(
      emptyToUndefined,
      z.coerce
        .number({ message: 'Year of birth must be a number' })
        .int('Year of birth must be a whole year')
        .min(1900, 'Year of birth must be 1900 or later')
        .refine((y) => y <= new Date().getUTCFullYear(), 'Year of birth cannot be in the future')
        .optional(),
    ),
    handedness: z.enum(HANDEDNESS, { message: 'Choose right, left or ambidextrous' }),
    consentStatus: z.enum(CONSENT_STATUSES, { message: 'Choose a consent status' }),
    consentDate: z.preprocess(
      emptyToUndefined,
      z
        .string()
        .regex(/^\d{4}-\d{2}-\d{2}$/, 'Give the date as YYYY-MM-DD')
        .refine(isCalendarDate, 'That is not a calendar date')
        .refine((d) => d <= todayIso(), 'The consent date cannot be in the future')
        .optional(),
    ),
    notes: z.string().max(2000, 'Keep notes to 2000 characters').default(''),
  })
  .superRefine((v, ctx) => {
    // A consent on record needs its date; "pending" has none yet.
    if (v.consentStatus !== 'pending' && !v.consentDate) {
      ctx.addIssue({ code: 'custom', path: ['consentDate'], message: 'Give the date consent was given' })
    }
  })

export type ParticipantInput = z.infer<typeof participantSchema>

export const PARTICIPANT_SORTS = {
  code: participants.code,
  yearOfBirth: participants.yearOfBirth,
  handedness: participants.handedness,
  consentStatus: participants.consentStatus,
  consentDate: participants.consentDate,
  updatedAt: participants.updatedAt,
} as const
export type ParticipantSort = keyof typeof PARTICIPANT_SORTS

export interface ParticipantQuery {
  q: string
  sort: ParticipantSort
  dir: 'asc' | 'desc'
}

/** Reads search and sort from the query string; unknown values fall back to code, ascending. */
export function participantQueryFrom(url: URL): ParticipantQuery {
  const sort = url.searchParams.get('sort') ?? 'code'
  const dir = url.searchParams.get('dir') === 'desc' ? 'desc' : 'asc'
  return {
    q: (url.searchParams.get('q') ?? '').trim().slice(0, 64),
    sort: (sort in PARTICIPANT_SORTS ? sort : 'code') as ParticipantSort,
    dir,
  }
}

/** Escapes LIKE wildcards so a search for "HS_01" means the text, not a pattern. */
function likeText(q: string): string {
  return `%${q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`
}

export async function listParticipants(db: Database, user: SessionUser, query: ParticipantQuery) {
  const column = PARTICIPANT_SORTS[query.sort]
  const order = query.dir === 'desc' ? desc(column) : asc(column)
  const search = query.q ? or(ilike(participants.code, likeText(query.q)), ilike(participants.notes, likeText(query.q))) : undefined
  const rows = await db
    .select({
      id: participants.id,
      code: participants.code,
      yearOfBirth: participants.yearOfBirth,
      handedness: participants.handedness,
      consentStatus: participants.consentStatus,
      consentDate: participants.consentDate,
      updatedAt: participants.updatedAt,
      sessions: sql<number>`(select count(*)::int from ${sessions} where ${sessions.participantId} = ${participants.id})`,
    })
    .from(participants)
    .where(and(eq(participants.labId, user.labId), search))
    .orderBy(order, asc(participants.code))
  const [total] = await db.select({ n: count() }).from(participants).where(eq(participants.labId, user.labId))
  return { rows: rows.map((r) => ({ ...r, updatedAt: r.updatedAt.toISOString() })), total: total?.n ?? 0 }
}

/** The participant if it is in the user's lab; otherwise 404. */
export async function getParticipant(db: Database, user: SessionUser, id: string) {
  if (!isUuid(id)) notFound('participant')
  const [row] = await db.select().from(participants).where(and(eq(participants.id, id), eq(participants.labId, user.labId)))
  if (!row) notFound('participant')
  return { ...row, createdAt: row.createdAt.toISOString(), updatedAt: row.updatedAt.toISOString() }
}

export class DuplicateCodeError extends Error {
  constructor(code: string) {
    super(`The code ${code} is already used in your lab`)
  }
}

async function codeTaken(db: Database, labId: string, code: string, exceptId?: string): Promise<boolean> {
  const rows = await db
    .select({ id: participants.id })
    .from(participants)
    .where(and(eq(participants.labId, labId), sql`lower(${participants.code}) = lower(${code})`))
  return rows.some((r) => r.id !== exceptId)
}

function toRow(input: ParticipantInput) {
  return {
    code: input.code,
    yearOfBirth: input.yearOfBirth ?? null,
    handedness: input.handedness,
    consentStatus: input.consentStatus,
    consentDate: input.consentDate ?? null,
    notes: input.notes.trim(),
  }
}

export async function createParticipant(db: Database, user: SessionUser, input: ParticipantInput) {
  if (await codeTaken(db, user.labId, input.code)) throw new DuplicateCodeError(input.code)
  const [row] = await db
    .insert(participants)
    .values({ labId: user.labId, ...toRow(input) })
    .returning()
    .catch((error: unknown) => {
      // Two people saving the same new code at once: the unique index decides.
      throw isUniqueViolation(error) ? new DuplicateCodeError(input.code) : error
    })
  await audit(db, { labId: user.labId, actorId: user.id, action: 'participant.created', target: row.code, detail: { participantId: row.id } })
  return row
}

export async function updateParticipant(db: Database, user: SessionUser, id: string, input: ParticipantInput) {
  const before = await getParticipant(db, user, id)
  if (await codeTaken(db, user.labId, input.code, id)) throw new DuplicateCodeError(input.code)
  const values = toRow(input)
  const changed = (Object.keys(values) as (keyof typeof values)[]).filter((k) => String(values[k] ?? '') !== String(before[k] ?? ''))
  const [row] = await db
    .update(participants)
    .set({ ...values, updatedAt: new Date() })
    .where(and(eq(participants.id, id), eq(participants.labId, user.labId)))
    .returning()
    .catch((error: unknown) => {
      throw isUniqueViolation(error) ? new DuplicateCodeError(input.code) : error
    })
  // The audit names the fields that changed, not their values: notes may be sensitive.
  await audit(db, { labId: user.labId, actorId: user.id, action: 'participant.updated', target: row.code, detail: { participantId: row.id, fields: changed } })
  return row
}
