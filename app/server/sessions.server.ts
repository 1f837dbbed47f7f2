// Sessions for the preparation screens: the lab's list (planned / live / ended), the choices
// for preparing one (participant, montage, protocol), creating it with the consent check, and
// the read side of the session page (runs, decoders with their comparison and patterns,
// device tokens, annotations). Live control (runs, tokens, training) goes through app/live.
import { and, asc, count, desc, eq, inArray, sql } from 'drizzle-orm'
import type { AppLoadContext } from 'react-router'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { annotations, decisions, decoders, deviceTokens, montages, participants, protocols, runs, sessions, trials, users } from '~/db/schema'
import { createDeviceToken, createFeedbackToken, revokeDeviceToken, revokeFeedbackToken } from '~/live/tokens.server'
import { audit } from '~/server/audit.server'
import type { SessionUser } from '~/server/services'

export type SessionGroup = 'planned' | 'live' | 'ended'

/** interrupted and imported sessions are finished records: they belong with the ended ones. */
export function groupOf(status: string): SessionGroup {
  if (status === 'planned') return 'planned'
  if (status === 'live') return 'live'
  return 'ended'
}

export async function listSessions(db: Database, user: SessionUser) {
  const rows = await db
    .select({
      id: sessions.id,
      status: sessions.status,
      createdAt: sessions.createdAt,
      startedAt: sessions.startedAt,
      endedAt: sessions.endedAt,
      signoff: sessions.signoffState,
      participant: participants.code,
      protocol: protocols.name,
      montage: montages.name,
      operator: users.name,
    })
    .from(sessions)
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .innerJoin(montages, eq(montages.id, sessions.montageId))
    .leftJoin(users, eq(users.id, sessions.operatorId))
    .where(eq(sessions.labId, user.labId))
    .orderBy(desc(sessions.createdAt))
    .limit(500)
  const ids = rows.map((r) => r.id)
  const runCounts = ids.length
    ? await db.select({ sessionId: runs.sessionId, n: count() }).from(runs).where(inArray(runs.sessionId, ids)).groupBy(runs.sessionId)
    : []
  const runsBySession = new Map(runCounts.map((r) => [r.sessionId, r.n]))
  const list = rows.map((r) => ({
    ...r,
    group: groupOf(r.status),
    runs: runsBySession.get(r.id) ?? 0,
    createdAt: r.createdAt.toISOString(),
    startedAt: r.startedAt?.toISOString() ?? null,
    endedAt: r.endedAt?.toISOString() ?? null,
  }))
  return {
    live: list.filter((s) => s.group === 'live'),
    planned: list.filter((s) => s.group === 'planned'),
    ended: list.filter((s) => s.group === 'ended'),
  }
}

export async function preparationChoices(db: Database, labId: string) {
  const [people, caps, plans] = await Promise.all([
    db
      .select({ id: participants.id, code: participants.code, consentStatus: participants.consentStatus, consentDate: participants.consentDate, handedness: participants.handedness, notes: participants.notes })
      .from(participants)
      .where(eq(participants.labId, labId))
      .orderBy(asc(participants.code)),
    db.select({ id: montages.id, name: montages.name, channels: montages.channels, reference: montages.reference }).from(montages).where(eq(montages.labId, labId)).orderBy(asc(montages.name)),
    db.select().from(protocols).where(eq(protocols.labId, labId)).orderBy(asc(protocols.name)),
  ])
  return {
    participants: people,
    montages: caps.map((m) => ({ id: m.id, name: m.name, channelCount: m.channels.length, reference: m.reference })),
    protocols: plans.map((p) => ({
      id: p.id,
      name: p.name,
      classes: p.classes,
      trialsPerClass: p.trialsPerClass,
      trialSeconds: p.fixationSeconds + p.cueSeconds + p.imagerySeconds + p.restSeconds + p.restJitterSeconds / 2,
      band: [p.bandLowHz, p.bandHighHz] as [number, number],
    })),
  }
}

export const prepareSessionSchema = z.object({
  participantId: z.string().uuid('Choose a participant'),
  montageId: z.string().uuid('Choose a montage'),
  protocolId: z.string().uuid('Choose a protocol'),
  notes: z.string().trim().max(4000, 'Keep the notes under 4000 characters').default(''),
  cautionsRead: z.literal('on', { error: 'Confirm that the session runs under an approved protocol with licensed supervision' }),
})

export type PrepareSessionInput = z.infer<typeof prepareSessionSchema>

export class PrepareError extends Error {
  constructor(
    public field: keyof PrepareSessionInput | '_form',
    message: string,
  ) {
    super(message)
  }
}

/** Creates a planned session; refuses a participant whose consent is not 'given'. */
export async function prepareSession(db: Database, user: SessionUser, input: PrepareSessionInput): Promise<string> {
  const [person] = await db.select().from(participants).where(and(eq(participants.id, input.participantId), eq(participants.labId, user.labId)))
  if (!person) throw new PrepareError('participantId', 'That participant is not in your lab')
  if (person.consentStatus !== 'given') {
    throw new PrepareError('participantId', `Consent for ${person.code} is ${person.consentStatus}: record given consent on the participant page before preparing a session`)
  }
  const [cap] = await db.select({ id: montages.id }).from(montages).where(and(eq(montages.id, input.montageId), eq(montages.labId, user.labId)))
  if (!cap) throw new PrepareError('montageId', 'That montage is not in your lab')
  const [plan] = await db.select({ id: protocols.id }).from(protocols).where(and(eq(protocols.id, input.protocolId), eq(protocols.labId, user.labId)))
  if (!plan) throw new PrepareError('protocolId', 'That protocol is not in your lab')
  const [row] = await db
    .insert(sessions)
    .values({ labId: user.labId, participantId: person.id, montageId: cap.id, protocolId: plan.id, operatorId: user.id, notes: input.notes })
    .returning({ id: sessions.id })
  await audit(db, { labId: user.labId, actorId: user.id, action: 'session.prepared', target: row.id, detail: { participant: person.code } })
  return row.id
}

export interface ComparisonEntry {
  method: string
  accuracy: number | null
  kappa: number | null
  chanceLevel: number | null
  itrBitsPerTrial: number | null
  components: number
  error?: string
}

export interface DecoderSummary {
  id: string
  version: number
  method: string
  cvAccuracy: number | null
  cvKappa: number | null
  chanceLevel: number | null
  trialCount: number | null
  band: [number, number] | null
  trainedOnRunIds: string[]
  createdAt: string
  comparison: ComparisonEntry[]
  /** Haufe patterns, component × channel, with the channel names of the decoder. */
  patterns: number[][]
  componentNames: string[]
  channels: string[]
  confusion: number[][] | null
  classes: string[]
}

function num(v: unknown): number | null {
  return typeof v === 'number' && Number.isFinite(v) ? v : null
}

/** The decoder row as the session page shows it; tolerant of older or partial models. */
export function summariseDecoder(row: typeof decoders.$inferSelect): DecoderSummary {
  const model = (row.model ?? {}) as Record<string, unknown>
  const cv = (model.cv ?? {}) as Record<string, unknown>
  const arr = <T,>(v: unknown): T[] => (Array.isArray(v) ? (v as T[]) : [])
  const band = arr<number>(model.band)
  return {
    id: row.id,
    version: row.version,
    method: row.method,
    cvAccuracy: row.cvAccuracy ?? num(cv.accuracy),
    cvKappa: row.cvKappa ?? num(cv.kappa),
    chanceLevel: num(cv.chanceLevel),
    trialCount: num(model.trialCount),
    band: band.length === 2 ? [band[0], band[1]] : null,
    trainedOnRunIds: row.trainedOnRunIds,
    createdAt: row.createdAt.toISOString(),
    comparison: arr<ComparisonEntry>(row.comparison).map((c) => ({
      method: String(c.method),
      accuracy: num(c.accuracy),
      kappa: num(c.kappa),
      chanceLevel: num(c.chanceLevel),
      itrBitsPerTrial: num(c.itrBitsPerTrial),
      components: num(c.components) ?? 0,
      error: c.error ? String(c.error) : undefined,
    })),
    patterns: arr<number[]>(model.patterns),
    componentNames: arr<string>(model.componentNames),
    channels: arr<string>(model.channels),
    confusion: Array.isArray(cv.confusion) ? (cv.confusion as number[][]) : null,
    classes: arr<string>(model.classes),
  }
}

/** Everything the session page shows, for a session row the caller already checked. */
export async function sessionOverview(db: Database, session: typeof sessions.$inferSelect) {
  const [[person], [cap], [plan], runRows, decoderRows, tokenRows, notes] = await Promise.all([
    db.select().from(participants).where(eq(participants.id, session.participantId)),
    db.select().from(montages).where(eq(montages.id, session.montageId)),
    db.select().from(protocols).where(eq(protocols.id, session.protocolId)),
    db.select().from(runs).where(eq(runs.sessionId, session.id)).orderBy(asc(runs.index)),
    db.select().from(decoders).where(eq(decoders.sessionId, session.id)).orderBy(desc(decoders.version)),
    db
      .select({ id: deviceTokens.id, prefix: deviceTokens.prefix, createdAt: deviceTokens.createdAt, expiresAt: deviceTokens.expiresAt, revokedAt: deviceTokens.revokedAt, lastUsedAt: deviceTokens.lastUsedAt })
      .from(deviceTokens)
      .where(eq(deviceTokens.sessionId, session.id))
      .orderBy(desc(deviceTokens.createdAt)),
    db
      .select({ id: annotations.id, text: annotations.text, runId: annotations.runId, sample: annotations.sample, createdAt: annotations.createdAt, author: users.name })
      .from(annotations)
      .leftJoin(users, eq(users.id, annotations.authorId))
      .where(eq(annotations.sessionId, session.id))
      .orderBy(asc(annotations.createdAt)),
  ])
  const runIds = runRows.map((r) => r.id)
  const [trialCounts, decisionCounts] = runIds.length
    ? await Promise.all([
        db
          .select({
            runId: trials.runId,
            n: count(),
            hits: sql<number>`count(*) filter (where ${trials.outcome} = 'hit')`.mapWith(Number),
            scored: sql<number>`count(*) filter (where ${trials.outcome} in ('hit','miss','timeout'))`.mapWith(Number),
          })
          .from(trials)
          .where(inArray(trials.runId, runIds))
          .groupBy(trials.runId),
        db.select({ runId: decisions.runId, n: count() }).from(decisions).where(inArray(decisions.runId, runIds)).groupBy(decisions.runId),
      ])
    : [[], []]
  const trialsBy = new Map(trialCounts.map((t) => [t.runId, t]))
  const decisionsBy = new Map(decisionCounts.map((d) => [d.runId, d.n]))
  const now = Date.now()
  return {
    session: {
      id: session.id,
      status: session.status,
      notes: session.notes,
      activeDecoderId: session.activeDecoderId,
      hasFeedbackLink: !!session.feedbackTokenHash,
      createdAt: session.createdAt.toISOString(),
      startedAt: session.startedAt?.toISOString() ?? null,
      endedAt: session.endedAt?.toISOString() ?? null,
      locked: !!session.lockedAt,
    },
    participant: person ? { code: person.code, handedness: person.handedness, consentStatus: person.consentStatus } : null,
    montage: cap ? { name: cap.name, channels: cap.channels } : null,
    protocol: plan
      ? { name: plan.name, classes: plan.classes, trialsPerClass: plan.trialsPerClass, band: [plan.bandLowHz, plan.bandHighHz] as [number, number] }
      : null,
    runs: runRows.map((r) => {
      const t = trialsBy.get(r.id)
      return {
        id: r.id,
        kind: r.kind,
        index: r.index,
        status: r.status,
        startedAt: r.startedAt?.toISOString() ?? null,
        endedAt: r.endedAt?.toISOString() ?? null,
        sampleCount: r.sampleCount,
        rateHz: r.rateHz,
        trials: t?.n ?? 0,
        hits: t?.hits ?? 0,
        scored: t?.scored ?? 0,
        decisions: decisionsBy.get(r.id) ?? 0,
        decoderId: r.decoderId,
      }
    }),
    decoders: decoderRows.map(summariseDecoder),
    deviceTokens: tokenRows.map((t) => ({
      id: t.id,
      prefix: t.prefix,
      createdAt: t.createdAt.toISOString(),
      expiresAt: t.expiresAt.toISOString(),
      lastUsedAt: t.lastUsedAt?.toISOString() ?? null,
      state: t.revokedAt ? ('revoked' as const) : t.expiresAt.getTime() <= now ? ('expired' as const) : ('active' as const),
    })),
    annotations: notes.map((a) => ({ ...a, createdAt: a.createdAt.toISOString() })),
  }
}

export type SessionOverview = Awaited<ReturnType<typeof sessionOverview>>

/** The session page's own form intents: device tokens and the participant's feedback link. */
export const sessionLinkSchema = z.discriminatedUnion('intent', [
  z.object({ intent: z.literal('create-token'), hours: z.coerce.number().int().min(1).max(168).default(12) }),
  z.object({ intent: z.literal('revoke-token'), tokenId: z.string().uuid('No such token') }),
  z.object({ intent: z.literal('feedback-link') }),
  z.object({ intent: z.literal('revoke-feedback-link') }),
])

export type SessionLinkInput = z.infer<typeof sessionLinkSchema>

const FINISHED = new Set(['ended', 'interrupted', 'imported'])

export async function sessionLinkAction(context: AppLoadContext, user: SessionUser, session: typeof sessions.$inferSelect, input: SessionLinkInput, origin: string) {
  const { db } = context.services
  if (FINISHED.has(session.status) && input.intent !== 'revoke-token' && input.intent !== 'revoke-feedback-link') {
    return { error: 'This session has ended: no new device tokens or feedback links.' }
  }
  const target = session.id
  switch (input.intent) {
    case 'create-token': {
      const created = await createDeviceToken(db, { labId: user.labId, sessionId: session.id, createdBy: user.id, hours: input.hours })
      await audit(db, { labId: user.labId, actorId: user.id, action: 'device-token.created', target, detail: { prefix: created.prefix, hours: input.hours } })
      return { created: { token: created.token, prefix: created.prefix, expiresAt: created.expiresAt.toISOString() } }
    }
    case 'revoke-token': {
      const ok = await revokeDeviceToken(db, session.id, input.tokenId)
      if (ok) await audit(db, { labId: user.labId, actorId: user.id, action: 'device-token.revoked', target, detail: { tokenId: input.tokenId } })
      return ok ? { revoked: true } : { error: 'No such token for this session.' }
    }
    case 'feedback-link': {
      const token = await createFeedbackToken(db, session.id)
      await audit(db, { labId: user.labId, actorId: user.id, action: 'feedback-link.created', target })
      return { feedbackUrl: `${origin}/feedback/${session.id}?token=${encodeURIComponent(token)}` }
    }
    case 'revoke-feedback-link': {
      await revokeFeedbackToken(db, session.id)
      await audit(db, { labId: user.labId, actorId: user.id, action: 'feedback-link.revoked', target })
      return { revoked: true }
    }
  }
}
