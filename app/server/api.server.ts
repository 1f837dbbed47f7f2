// The /api/v1 resource routes' shared parts: who may call them, query validation with zod, and
// the lab scoping of runs and decoders. Every route answers JSON (or a file / NDJSON stream);
// errors are `{ message, errors? }` with a 4xx status.
//
// Access: a developer's bearer API token (scripts), or a signed-in supervisor, operator or
// developer in the browser (the review table fetches /api/v1/sessions). Participants: 403.
// Everything is scoped to the caller's lab; other labs' ids answer 404.
import { and, eq } from 'drizzle-orm'
import { data, type AppLoadContext } from 'react-router'
import type { z } from 'zod'
import { decoders, runs, sessions } from '~/db/schema'
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
