// Accounts: creating users, invitations and password resets by e-mailed one-time link.
import { and, eq, gt, isNull } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { authTokens, users } from '~/db/schema'
import { audit } from '~/server/audit.server'
import { hashPassword, hashToken, newToken } from '~/server/passwords.server'
import type { Mailer, Role } from '~/server/services'

export const INVITE_HOURS = 72
export const RESET_MINUTES = 30

export class PeopleError extends Error {}

export async function createUser(
  db: Database,
  input: { labId: string; email: string; name: string; role: Role; password?: string | null; participantId?: string | null },
) {
  const email = input.email.trim().toLowerCase()
  const [existing] = await db.select({ id: users.id }).from(users).where(eq(users.email, email))
  if (existing) throw new PeopleError(`An account for ${email} already exists.`)
  const [row] = await db
    .insert(users)
    .values({
      labId: input.labId,
      email,
      name: input.name.trim(),
      role: input.role,
      passwordHash: input.password ? await hashPassword(input.password) : null,
      participantId: input.participantId ?? null,
    })
    .returning()
  return row
}

async function issueLink(db: Database, userId: string, kind: 'invite' | 'reset', ttlMs: number): Promise<string> {
  const token = newToken(kind === 'invite' ? 'inv' : 'rst')
  await db.insert(authTokens).values({ userId, kind, tokenHash: hashToken(token), expiresAt: new Date(Date.now() + ttlMs) })
  return token
}

/** Creates the account without a password and e-mails a link to set one. */
export async function invitePerson(
  deps: { db: Database; mail: Mailer; publicUrl: string },
  input: { labId: string; invitedBy: string; email: string; name: string; role: Role; participantId?: string | null },
) {
  const user = await createUser(deps.db, { ...input, password: null })
  const token = await issueLink(deps.db, user.id, 'invite', INVITE_HOURS * 3600_000)
  const link = `${deps.publicUrl}/invite/${token}`
  await deps.mail.send({
    to: user.email,
    labId: input.labId,
    subject: 'You are invited to Tiller',
    text: `Hello ${user.name},\n\nYou have been invited to your lab's Tiller as ${input.role}.\nSet your password here (valid for ${INVITE_HOURS} hours):\n\n${link}\n\nIf you did not expect this, ignore this message.`,
  })
  await audit(deps.db, { labId: input.labId, actorId: input.invitedBy, action: 'person.invited', target: user.email, detail: { role: input.role } })
  return { user, link }
}

/** Always behaves the same whether or not the address exists, so it cannot be probed. */
export async function requestPasswordReset(deps: { db: Database; mail: Mailer; publicUrl: string }, emailInput: string) {
  const email = emailInput.trim().toLowerCase()
  const [user] = await deps.db.select().from(users).where(eq(users.email, email))
  if (!user || !user.active) return
  const token = await issueLink(deps.db, user.id, 'reset', RESET_MINUTES * 60_000)
  await deps.mail.send({
    to: user.email,
    labId: user.labId,
    subject: 'Reset your Tiller password',
    text: `Hello ${user.name},\n\nSomeone asked to reset the password of this Tiller account. Set a new one here (valid for ${RESET_MINUTES} minutes, once):\n\n${deps.publicUrl}/reset/${token}\n\nIf it was not you, ignore this message; your password stays as it is.`,
  })
  await audit(deps.db, { labId: user.labId, actorId: user.id, action: 'password.reset-requested' })
}

/** The user a still-valid, unused link belongs to, or null. */
export async function findLinkUser(db: Database, token: string, kind: 'invite' | 'reset') {
  const [row] = await db
    .select({ link: authTokens, user: users })
    .from(authTokens)
    .innerJoin(users, eq(users.id, authTokens.userId))
    .where(and(eq(authTokens.tokenHash, hashToken(token)), eq(authTokens.kind, kind), isNull(authTokens.usedAt), gt(authTokens.expiresAt, new Date())))
  return row ?? null
}

/** Sets the password from an invitation or reset link and uses the link up. */
export async function setPasswordFromLink(db: Database, token: string, kind: 'invite' | 'reset', password: string) {
  const found = await findLinkUser(db, token, kind)
  if (!found) throw new PeopleError('This link has expired or was already used. Ask for a new one.')
  await db.update(users).set({ passwordHash: await hashPassword(password) }).where(eq(users.id, found.user.id))
  await db.update(authTokens).set({ usedAt: new Date() }).where(eq(authTokens.id, found.link.id))
  await audit(db, { labId: found.user.labId, actorId: found.user.id, action: kind === 'invite' ? 'invitation.accepted' : 'password.reset' })
  return found.user
}
