// Sign-in, the cookie session, and the role and lab checks every loader, action, resource
// route and stream goes through. remix-auth's FormStrategy verifies the password; the user
// id is then kept in a signed cookie session (remix-auth 4 leaves sessions to the app).
import { and, count, eq, gt } from 'drizzle-orm'
import { createCookieSessionStorage, data, redirect, type AppLoadContext, type SessionStorage } from 'react-router'
import { Authenticator } from 'remix-auth'
import { FormStrategy } from 'remix-auth-form'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { apiTokens, sessions, signInAttempts, users } from '~/db/schema'
import { audit, clientIp } from '~/server/audit.server'
import type { Config } from '~/server/config.server'
import { hashToken, verifyPassword } from '~/server/passwords.server'
import type { Role, SessionUser } from '~/server/services'

export const ROLES: Role[] = ['supervisor', 'operator', 'participant', 'developer']

export const ROLE_HOME: Record<Role, string> = {
  supervisor: '/home',
  operator: '/home',
  participant: '/me',
  developer: '/home',
}

/** Failed attempts allowed per e-mail and per client address in the throttle window. */
export const THROTTLE = { maxFailures: 5, windowMinutes: 15 }

const storages = new WeakMap<Config, SessionStorage>()

export function sessionStorageFor(config: Config): SessionStorage {
  let storage = storages.get(config)
  if (!storage) {
    storage = createCookieSessionStorage({
      cookie: {
        name: 'tiller_session',
        httpOnly: true,
        sameSite: 'lax',
        path: '/',
        secure: config.production && config.publicUrl.startsWith('https://'),
        secrets: [config.sessionSecret],
        maxAge: 60 * 60 * 12,
      },
    })
    storages.set(config, storage)
  }
  return storage
}

export const signInSchema = z.object({
  email: z.string().trim().toLowerCase().email('Enter the e-mail address you were invited with'),
  password: z.string().min(1, 'Enter your password').max(200),
})

export class SignInError extends Error {}

function toSessionUser(row: typeof users.$inferSelect): SessionUser {
  return { id: row.id, labId: row.labId, role: row.role, email: row.email, name: row.name, participantId: row.participantId }
}

async function recentFailures(db: Database, key: string): Promise<number> {
  const since = new Date(Date.now() - THROTTLE.windowMinutes * 60_000)
  const [row] = await db
    .select({ n: count() })
    .from(signInAttempts)
    .where(and(eq(signInAttempts.key, key), gt(signInAttempts.at, since)))
  return row?.n ?? 0
}

/** True when the key (an e-mail or an address) has used up its failed attempts. */
export async function isThrottled(db: Database, keys: string[]): Promise<boolean> {
  for (const key of keys) if ((await recentFailures(db, key)) >= THROTTLE.maxFailures) return true
  return false
}

export async function recordFailure(db: Database, keys: string[]): Promise<void> {
  await db.insert(signInAttempts).values(keys.map((key) => ({ key })))
}

function authenticatorFor(db: Database): Authenticator<SessionUser> {
  const authenticator = new Authenticator<SessionUser>()
  authenticator.use(
    new FormStrategy(async ({ form, request }) => {
      const parsed = signInSchema.safeParse(Object.fromEntries(form))
      if (!parsed.success) throw new SignInError(parsed.error.issues[0]?.message ?? 'Check the form')
      const { email, password } = parsed.data
      const keys = [`email:${email}`, `ip:${clientIp(request) ?? 'unknown'}`]
      if (await isThrottled(db, keys)) {
        throw new SignInError(`Too many failed attempts. Wait ${THROTTLE.windowMinutes} minutes, or reset your password.`)
      }
      const [row] = await db.select().from(users).where(eq(users.email, email))
      const ok = row?.active ? await verifyPassword(password, row.passwordHash) : false
      if (!row || !ok) {
        await recordFailure(db, keys)
        await audit(db, { labId: row?.labId ?? null, actorId: row?.id ?? null, action: 'sign-in.failed', target: email, ip: clientIp(request) })
        throw new SignInError('That e-mail and password do not match an active account.')
      }
      await db.update(users).set({ lastSignInAt: new Date() }).where(eq(users.id, row.id))
      await audit(db, { labId: row.labId, actorId: row.id, action: 'sign-in', ip: clientIp(request) })
      return toSessionUser(row)
    }),
    'password',
  )
  return authenticator
}

/**
 * Verifies the form and, on success, starts a fresh session (a new cookie: the session is
 * rotated at sign-in so a planted cookie cannot be promoted) and redirects home.
 */
export async function signIn(request: Request, context: AppLoadContext, redirectTo: string | null) {
  const { db, config } = context.services
  let user: SessionUser
  try {
    user = await authenticatorFor(db).authenticate('password', request)
  } catch (error) {
    const message = error instanceof SignInError ? error.message : 'Sign-in failed. Try again.'
    return data({ error: message }, { status: 400 })
  }
  const storage = sessionStorageFor(config)
  const session = await storage.getSession()
  session.set('userId', user.id)
  session.set('issuedAt', Date.now())
  const target = redirectTo && redirectTo.startsWith('/') && !redirectTo.startsWith('//') ? redirectTo : ROLE_HOME[user.role]
  return redirect(target, { headers: { 'Set-Cookie': await storage.commitSession(session) } })
}

export async function signOut(request: Request, context: AppLoadContext) {
  const storage = sessionStorageFor(context.services.config)
  const session = await storage.getSession(request.headers.get('Cookie'))
  const user = await getUser(request, context)
  if (user) await audit(context.services.db, { labId: user.labId, actorId: user.id, action: 'sign-out', ip: clientIp(request) })
  return redirect('/sign-in', { headers: { 'Set-Cookie': await storage.destroySession(session) } })
}

/** The signed-in user, or null. Deactivated accounts count as signed out. */
export async function getUser(request: Request, context: AppLoadContext): Promise<SessionUser | null> {
  const storage = sessionStorageFor(context.services.config)
  const session = await storage.getSession(request.headers.get('Cookie'))
  const userId = session.get('userId')
  if (typeof userId !== 'string') return null
  const [row] = await context.services.db.select().from(users).where(eq(users.id, userId))
  if (!row || !row.active) return null
  return toSessionUser(row)
}

/** A bearer API token (developer role) from the Authorization header, or null. */
export async function getApiUser(request: Request, context: AppLoadContext): Promise<SessionUser | null> {
  const header = request.headers.get('Authorization')
  const match = header?.match(/^Bearer\s+(\S+)$/i)
  if (!match) return null
  const { db } = context.services
  const [row] = await db
    .select({ token: apiTokens, user: users })
    .from(apiTokens)
    .innerJoin(users, eq(users.id, apiTokens.userId))
    .where(eq(apiTokens.tokenHash, hashToken(match[1])))
  if (!row || row.token.revokedAt || !row.user.active) return null
  if (row.token.expiresAt && row.token.expiresAt.getTime() < Date.now()) return null
  await db.update(apiTokens).set({ lastUsedAt: new Date() }).where(eq(apiTokens.id, row.token.id))
  return toSessionUser(row.user)
}

function forbidden(): never {
  throw data({ message: 'Your role does not allow this.' }, { status: 403 })
}

/**
 * The signed-in user with one of the given roles. Signed out: redirect to sign-in for pages,
 * 401 for resource routes that asked for `api: true`. Wrong role: 403.
 */
export async function requireUser(
  request: Request,
  context: AppLoadContext,
  options: { roles?: Role[]; api?: boolean } = {},
): Promise<SessionUser> {
  const user = (await getUser(request, context)) ?? (options.api ? await getApiUser(request, context) : null)
  if (!user) {
    if (options.api) throw data({ message: 'Sign in or send a valid API token.' }, { status: 401 })
    const url = new URL(request.url)
    throw redirect(`/sign-in?redirectTo=${encodeURIComponent(url.pathname + url.search)}`)
  }
  if (options.roles && !options.roles.includes(user.role)) forbidden()
  return user
}

/** An API request authenticated by bearer token only (no cookies: not open to CSRF). */
export async function requireApiUser(request: Request, context: AppLoadContext, roles: Role[] = ['developer']): Promise<SessionUser> {
  const user = await getApiUser(request, context)
  if (!user) throw data({ message: 'Send a valid API token: Authorization: Bearer <token>.' }, { status: 401 })
  if (!roles.includes(user.role)) forbidden()
  return user
}

/**
 * The session row if it belongs to the user's lab (and, for a participant, to them).
 * Anything else is a 404, so ids of other labs cannot be probed.
 */
export async function requireSessionAccess(context: AppLoadContext, user: SessionUser, sessionId: string) {
  if (!z.string().uuid().safeParse(sessionId).success) throw data({ message: 'No such session.' }, { status: 404 })
  const [row] = await context.services.db.select().from(sessions).where(and(eq(sessions.id, sessionId), eq(sessions.labId, user.labId)))
  if (!row) throw data({ message: 'No such session.' }, { status: 404 })
  if (user.role === 'participant' && row.participantId !== user.participantId) throw data({ message: 'No such session.' }, { status: 404 })
  return row
}
