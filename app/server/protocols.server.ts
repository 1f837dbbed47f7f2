// Protocols of a lab: the classes to imagine, the trial timing (fixation, cue, imagery, rest
// with jitter), trials per class, the band and the training and decoding windows. A protocol
// that sessions already ran keeps its settings; changes are saved as a new protocol instead,
// so a session's record always describes what the participant actually did.
import { and, asc, eq, sql } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { protocols, sessions } from '~/db/schema'
import { audit } from '~/server/audit.server'
import { PROTOCOL_CLASSES } from '~/lib/choices'
import { isUuid, notFound } from '~/server/records.server'
import type { SessionUser } from '~/server/services'

const CLASS_VALUES = PROTOCOL_CLASSES.map((c) => c.value) as ['left', 'right', 'feet', 'rest']

const emptyToUndefined = (v: unknown) => (typeof v === 'string' && v.trim() === '' ? undefined : v)

function seconds(label: string, min: number, max: number) {
  return z.preprocess(
    emptyToUndefined,
    z.coerce
      .number({ message: `${label}: enter a number of seconds` })
      .refine(Number.isFinite, `${label}: enter a number of seconds`)
      .min(min, `${label}: at least ${min} s`)
      .max(max, `${label}: at most ${max} s`),
  )
}

function hertz(label: string) {
  return z.preprocess(
    emptyToUndefined,
    z.coerce
      .number({ message: `${label}: enter a frequency in Hz` })
      .refine(Number.isFinite, `${label}: enter a frequency in Hz`)
      .min(0.5, `${label}: at least 0.5 Hz`)
      .max(100, `${label}: at most 100 Hz`),
  )
}

export const protocolSchema = z
  .object({
    intent: z.enum(['save', 'copy']).default('save'),
    name: z.string().trim().min(1, 'Give the protocol a name').max(80, 'Keep the name to 80 characters'),
    classes: z.preprocess(
      (v) => (v === undefined ? [] : Array.isArray(v) ? v : [v]),
      z
        .array(z.enum(CLASS_VALUES, { message: 'Unknown class' }))
        .min(2, 'Choose at least two classes')
        .max(4)
        .refine((a) => new Set(a).size === a.length, 'Each class once'),
    ),
    fixationSeconds: seconds('Fixation', 0, 10),
    cueSeconds: seconds('Cue', 0.25, 5),
    imagerySeconds: seconds('Imagery', 1, 15),
    restSeconds: seconds('Rest', 0.5, 15),
    restJitterSeconds: seconds('Rest jitter', 0, 5),
    trialsPerClass: z.preprocess(
      emptyToUndefined,
      z.coerce.number({ message: 'Enter a number of trials' }).int('Trials per class is a whole number').min(5, 'At least 5 trials per class').max(200, 'At most 200 trials per class'),
    ),
    bandLowHz: hertz('Band low edge'),
    bandHighHz: hertz('Band high edge'),
    windowStartSeconds: seconds('Training window start', 0, 15),
    windowEndSeconds: seconds('Training window end', 0.25, 20),
    decodingWindowSeconds: seconds('Decoding window', 0.25, 4),
  })
  .superRefine((v, ctx) => {
    if (v.bandHighHz <= v.bandLowHz) ctx.addIssue({ code: 'custom', path: ['bandHighHz'], message: 'The high edge must be above the low edge' })
    if (v.windowEndSeconds <= v.windowStartSeconds) ctx.addIssue({ code: 'custom', path: ['windowEndSeconds'], message: 'The window must end after it starts' })
    // The training epoch is counted from cue onset; after cue + imagery the participant rests.
    const trialActive = v.cueSeconds + v.imagerySeconds
    if (v.windowEndSeconds > trialActive + 1e-9) {
      ctx.addIssue({ code: 'custom', path: ['windowEndSeconds'], message: `The window must end by the end of imagery (${trialActive} s after cue onset)` })
    }
    if (v.decodingWindowSeconds > v.imagerySeconds) {
      ctx.addIssue({ code: 'custom', path: ['decodingWindowSeconds'], message: 'The decoding window cannot be longer than the imagery period' })
    }
  })

export type ProtocolInput = z.infer<typeof protocolSchema>

const usedBy = sql<number>`(select count(*)::int from ${sessions} where ${sessions.protocolId} = ${protocols.id})`

export async function listProtocols(db: Database, user: SessionUser) {
  const rows = await db
    .select({ protocol: protocols, sessions: usedBy })
    .from(protocols)
    .where(eq(protocols.labId, user.labId))
    .orderBy(asc(protocols.name))
  return rows.map((r) => ({ ...r.protocol, createdAt: r.protocol.createdAt.toISOString(), sessions: r.sessions }))
}

export async function getProtocol(db: Database, user: SessionUser, id: string) {
  if (!isUuid(id)) notFound('protocol')
  const [row] = await db
    .select({ protocol: protocols, sessions: usedBy })
    .from(protocols)
    .where(and(eq(protocols.id, id), eq(protocols.labId, user.labId)))
  if (!row) notFound('protocol')
  return { ...row.protocol, createdAt: row.protocol.createdAt.toISOString(), sessions: row.sessions }
}

function toRow(input: ProtocolInput) {
  const { intent: _intent, ...rest } = input
  return rest
}

export async function createProtocol(db: Database, user: SessionUser, input: ProtocolInput, copiedFrom?: string) {
  const [row] = await db.insert(protocols).values({ labId: user.labId, ...toRow(input) }).returning()
  await audit(db, {
    labId: user.labId,
    actorId: user.id,
    action: 'protocol.created',
    target: row.name,
    detail: { protocolId: row.id, classes: row.classes, trialsPerClass: row.trialsPerClass, ...(copiedFrom ? { copiedFrom } : {}) },
  })
  return row
}

export class ProtocolInUseError extends Error {}

/** Saves changes in place, or as a new protocol when asked to or when sessions used it. */
export async function saveProtocol(db: Database, user: SessionUser, id: string, input: ProtocolInput) {
  const before = await getProtocol(db, user, id)
  if (input.intent === 'copy') return createProtocol(db, user, input, before.id)
  if (before.sessions > 0) {
    throw new ProtocolInUseError(`${before.sessions} session(s) ran this protocol, so its settings stay as they were. Save the changes as a new protocol.`)
  }
  const values = toRow(input)
  const changed = (Object.keys(values) as (keyof typeof values)[]).filter((k) => JSON.stringify(values[k]) !== JSON.stringify(before[k]))
  const [row] = await db
    .update(protocols)
    .set(values)
    .where(and(eq(protocols.id, id), eq(protocols.labId, user.labId)))
    .returning()
  await audit(db, { labId: user.labId, actorId: user.id, action: 'protocol.updated', target: row.name, detail: { protocolId: row.id, fields: changed } })
  return row
}
