// The pages behind e-mailed one-time links: setting a password from an invitation, asking
// for a reset link (throttled, and silent about whether the address exists), and setting a
// new password from a reset link. The links themselves are issued by people.server.ts.
import { z } from 'zod'
import { MIN_PASSWORD } from '~/lib/choices'
import type { Database } from '~/db/client.server'
import { clientIp } from '~/server/audit.server'
import { isThrottled, recordFailure, THROTTLE } from '~/server/auth.server'
import { findLinkUser, PeopleError, requestPasswordReset, setPasswordFromLink } from '~/server/people.server'
import type { Mailer } from '~/server/services'

export type LinkKind = 'invite' | 'reset'

export { MIN_PASSWORD }

export const newPasswordSchema = z
  .object({
    password: z.string().min(MIN_PASSWORD, `Use at least ${MIN_PASSWORD} characters`).max(200, 'Use at most 200 characters'),
    confirm: z.string(),
  })
  .refine((v) => v.password === v.confirm, { path: ['confirm'], message: 'The two passwords differ' })

export const resetRequestSchema = z.object({
  email: z.string().trim().toLowerCase().email('Enter the e-mail address of your account'),
})

export const EXPIRED_LINK = 'This link has expired or was already used. Ask for a new one.'

/** Who a link is for, if it still works; a deactivated account's links do not. */
export async function linkState(db: Database, token: string, kind: LinkKind): Promise<{ valid: true; name: string; email: string } | { valid: false }> {
  const found = token.length <= 200 ? await findLinkUser(db, token, kind) : null
  if (!found || !found.user.active) return { valid: false }
  return { valid: true, name: found.user.name, email: found.user.email }
}

export class LinkError extends Error {}

export async function setPasswordWithLink(db: Database, token: string, kind: LinkKind, password: string) {
  const state = await linkState(db, token, kind)
  if (!state.valid) throw new LinkError(EXPIRED_LINK)
  try {
    return await setPasswordFromLink(db, token, kind, password)
  } catch (error) {
    // Two tabs racing on one link: the second finds it used.
    if (error instanceof PeopleError) throw new LinkError(EXPIRED_LINK)
    throw error
  }
}

/**
 * Sends a reset link when the address has an active account. Requests count against the
 * address and the client in the same window as failed sign-ins (auth.server.ts THROTTLE), so
 * nobody can flood an inbox or probe addresses quickly. The answer never says whether the
 * address exists.
 */
export async function requestReset(deps: { db: Database; mail: Mailer; publicUrl: string }, request: Request, email: string): Promise<{ throttled: boolean }> {
  const keys = [`reset-email:${email}`, `reset-ip:${clientIp(request) ?? 'unknown'}`]
  if (await isThrottled(deps.db, keys)) return { throttled: true }
  await recordFailure(deps.db, keys)
  await requestPasswordReset(deps, email)
  return { throttled: false }
}

export const RESET_THROTTLED = `Too many reset requests. Wait ${THROTTLE.windowMinutes} minutes, then try again.`
