// The /api/v1 resource routes' shared parts: who may call them, query validation with zod, and
// the lab scoping of runs and decoders. Every route answers JSON (or a file / NDJSON stream);
// errors are `{ message, errors? }` with a 4xx status.
//
// Access: a developer's bearer API token (scripts), or a signed-in supervisor, operator or
// developer in the browser (the review table fetches /api/v1/sessions). Participants: 403.
// Everything is scoped to the caller's lab; other labs' ids answer 404.
import { and, asc, eq, gt } from 'drizzle-orm'
import { data, type AppLoadContext } from 'react-router'
import { z } from 'zod'
import { decisions, decoders, runs, sessions } from '~/db/schema'
import { getApiUser, getUser } from '~/server/auth.server'
import type { Role, SessionUser } from '~/server/services'

export const API_BROWSER_ROLES: Role[] = ['supervisor', 'operator', 'developer']

export function apiError(status: number, message: string, errors?: Record<string, string>): never {
  throw data(errors ? { message, errors } : { message }, { status })
}

/**
 * The caller of an API route. A bearer token is tried first (and must belong to a developer);
 * otherwise the browser's cookie session (GET only: the API changes nothing).
 */
export async function requireApiCaller(request: Request, context: AppLoadContext): Promise<SessionUser> {
  if (request.headers.has('Authorization')) {
    const user = await getApiUser(request, context)
    if (!user) apiError(401, 'The API token is not valid (unknown, revoked or expired). Send Authorization: Bearer <token>.')
    if (user.role !== 'developer') apiError(403, 'API tokens work for the developer role only.')
    return user
  }
  const user = await getUser(request, context)
  if (!user) apiError(401, 'Send a valid API token: Authorization: Bearer <token>.')
  if (!API_BROWSER_ROLES.includes(user.role)) apiError(403, 'Your role does not allow this.')
  return user
}

/** Validates the URL's query parameters; unknown parameters are ignored. */
export function parseQuery<S extends z.ZodType>(schema: S, request: Request): z.infer<S> {
  const params = Object.fromEntries(new URL(request.url).searchParams)
  const parsed = schema.safeParse(params)
  if (parsed.success) return parsed.data
  const errors: Record<string, string> = {}
  for (const issue of parsed.error.issues) errors[String(issue.path[0] ?? 'query')] ??= issue.message
  apiError(400, 'Check the query parameters.', errors)
}

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i

/** The run if its session belongs to the caller's lab, else 404. */
export async function requireRunInLab(context: AppLoadContext, user: SessionUser, runId: string | undefined) {
  if (!runId || !UUID.test(runId)) apiError(404, 'No such run.')
  const [row] = await context.services.db
    .select({ run: runs, session: sessions })
    .from(runs)
    .innerJoin(sessions, eq(sessions.id, runs.sessionId))
    .where(and(eq(runs.id, runId), eq(sessions.labId, user.labId)))
  if (!row) apiError(404, 'No such run.')
  if (user.role === 'participant' && row.session.participantId !== user.participantId) apiError(404, 'No such run.')
  return row
}

/** The decoder if it belongs to the caller's lab, else 404. */
export async function requireDecoderInLab(context: AppLoadContext, user: SessionUser, decoderId: string | undefined) {
  if (!decoderId || !UUID.test(decoderId)) apiError(404, 'No such decoder.')
  const [row] = await context.services.db.select().from(decoders).where(and(eq(decoders.id, decoderId), eq(decoders.labId, user.labId)))
  if (!row) apiError(404, 'No such decoder.')
  if (user.role === 'participant' && row.participantId !== user.participantId) apiError(404, 'No such decoder.')
  return row
}

/** Absolute URL for a path, for links in API answers. */
export function apiUrl(context: AppLoadContext, path: string): string {
  return `${context.services.config.publicUrl}${path}`
}

// ---------------------------------------------------------------------------------------------
// Read models of the API: plain JSON, ISO times, ids for the next call.

export const decisionPageQuery = z.object({
  after: z.coerce.number().int().min(-1).default(-1),
  limit: z.coerce.number().int().min(1).max(5000).default(1000),
})

export const recordingQuery = z.object({ format: z.enum(['edf', 'bdf', 'csv']).default('edf') })

export const decoderListQuery = z.object({
  participant: z.preprocess((v) => (v === '' ? undefined : v), z.string().uuid().optional()),
})

const iso = (d: Date | null) => d?.toISOString() ?? null

export function runJson(context: AppLoadContext, run: typeof runs.$inferSelect) {
  return {
    id: run.id,
    sessionId: run.sessionId,
    kind: run.kind,
    index: run.index,
    status: run.status,
    source: run.source,
    decoderId: run.decoderId,
    rateHz: run.rateHz,
    channels: run.channels ?? [],
    sampleCount: run.sampleCount,
    startedAt: iso(run.startedAt),
    endedAt: iso(run.endedAt),
    links: {
      self: apiUrl(context, `/api/v1/runs/${run.id}`),
      decisions: apiUrl(context, `/api/v1/runs/${run.id}/decisions`),
      decisionsNdjson: apiUrl(context, `/api/v1/runs/${run.id}/decisions.ndjson`),
      recording: apiUrl(context, `/api/v1/runs/${run.id}/recording?format=edf`),
    },
  }
}

export async function sessionJson(context: AppLoadContext, session: typeof sessions.$inferSelect) {
  const { db } = context.services
  const runRows = await db.select().from(runs).where(eq(runs.sessionId, session.id)).orderBy(asc(runs.index))
  return {
    id: session.id,
    participantId: session.participantId,
    operatorId: session.operatorId,
    protocolId: session.protocolId,
    montageId: session.montageId,
    status: session.status,
    activeDecoderId: session.activeDecoderId,
    createdAt: iso(session.createdAt),
    startedAt: iso(session.startedAt),
    endedAt: iso(session.endedAt),
    signoff: { state: session.signoffState, comment: session.signoffComment, signedOffBy: session.signedOffBy, signedOffAt: iso(session.signedOffAt), lockedAt: iso(session.lockedAt) },
    runs: runRows.map((r) => runJson(context, r)),
    links: {
      self: apiUrl(context, `/api/v1/sessions/${session.id}`),
      decisionsCsv: apiUrl(context, `/exports/sessions/${session.id}/decisions.csv`),
      review: apiUrl(context, `/review/sessions/${session.id}`),
      // Server-sent event streams of a live session (app/live): the console's and the feedback view's.
      operatorStream: apiUrl(context, `/live/${session.id}/operator`),
      feedbackStream: apiUrl(context, `/live/${session.id}/feedback`),
    },
  }
}

export async function decisionPage(context: AppLoadContext, runId: string, q: z.infer<typeof decisionPageQuery>) {
  const rows = await context.services.db
    .select()
    .from(decisions)
    .where(and(eq(decisions.runId, runId), gt(decisions.sample, q.after)))
    .orderBy(asc(decisions.sample), asc(decisions.id))
    .limit(q.limit + 1)
  const more = rows.length > q.limit
  const page = rows.slice(0, q.limit)
  const last = page[page.length - 1]
  return {
    runId,
    rows: page.map((d) => ({ trialIndex: d.trialIndex, sample: d.sample, receivedAt: d.receivedAt.toISOString(), output: d.output, probability: d.probability, decidedClass: d.decidedClass, cue: d.cue, latencyUs: d.latencyUs })),
    next: more && last ? apiUrl(context, `/api/v1/runs/${runId}/decisions?after=${last.sample}&limit=${q.limit}`) : null,
  }
}

export function decoderSummaryJson(context: AppLoadContext, d: typeof decoders.$inferSelect) {
  return {
    id: d.id,
    participantId: d.participantId,
    sessionId: d.sessionId,
    version: d.version,
    method: d.method,
    trainedOnRunIds: d.trainedOnRunIds,
    cvAccuracy: d.cvAccuracy,
    cvKappa: d.cvKappa,
    createdAt: iso(d.createdAt),
    links: { self: apiUrl(context, `/api/v1/decoders/${d.id}`), json: apiUrl(context, `/exports/decoders/${d.id}.json`) },
  }
}

export async function listDecoders(context: AppLoadContext, user: SessionUser, q: z.infer<typeof decoderListQuery>) {
  const where = [eq(decoders.labId, user.labId)]
  if (q.participant) where.push(eq(decoders.participantId, q.participant))
  const rows = await context.services.db.select().from(decoders).where(and(...where)).orderBy(asc(decoders.participantId), asc(decoders.version))
  return { rows: rows.map((d) => decoderSummaryJson(context, d)) }
}
