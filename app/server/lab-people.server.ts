// The lab's accounts as supervisors manage them: the list, invitations (through
// people.server.ts invitePerson) and deactivation. A deactivated account cannot sign in, its
// API tokens are revoked and its unused invitation or reset links stop working.
import { and, asc, eq, isNull, notInArray } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { apiTokens, authTokens, participants, users } from '~/db/schema'
import { audit } from '~/server/audit.server'
import { invitePerson, PeopleError } from '~/server/people.server'
import { isUuid, notFound } from '~/server/records.server'
import type { Mailer, SessionUser } from '~/server/services'

export const inviteSchema = z
  .object({
    email: z.string().trim().toLowerCase().email('Enter an e-mail address'),
    name: z.string().trim().min(1, 'Enter the person’s name (or the participant code)').max(80, 'Keep the name to 80 characters'),
    role: z.enum(['supervisor', 'operator', 'participant', 'developer'], { message: 'Choose a role' }),
    participantId: z.string().optional(),
  })
  .superRefine((v, ctx) => {
    if (v.role === 'participant' && !v.participantId) {
      ctx.addIssue({ code: 'custom', path: ['participantId'], message: 'Choose the participant record this account may see' })
    }
  })

export const personStatusSchema = z.object({
  intent: z.enum(['deactivate', 'reactivate']),
  userId: z.string().uuid('Unknown account'),
})

export type PersonState = 'active' | 'invited' | 'deactivated'

export async function listPeople(db: Database, user: SessionUser) {
  const rows = await db
    .select({
      id: users.id,
      name: users.name,
      email: users.email,
      role: users.role,
      active: users.active,
      hasPassword: users.passwordHash,
      createdAt: users.createdAt,
      lastSignInAt: users.lastSignInAt,
      participantCode: participants.code,
    })
    .from(users)
    .leftJoin(participants, eq(participants.id, users.participantId))
    .where(eq(users.labId, user.labId))
    .orderBy(asc(users.name))
  return rows.map(({ hasPassword, ...r }) => ({
    ...r,
    state: (!r.active ? 'deactivated' : hasPassword ? 'active' : 'invited') as PersonState,
    createdAt: r.createdAt.toISOString(),
    lastSignInAt: r.lastSignInAt?.toISOString() ?? null,
    self: r.id === user.id,
  }))
}

/** Participants of the lab that no account is linked to yet: the choices for a participant invitation. */
export async function unlinkedParticipants(db: Database, user: SessionUser) {
  const linked = await db
    .select({ id: users.participantId })
    .from(users)
    .where(and(eq(users.labId, user.labId), eq(users.role, 'participant')))
  const ids = linked.map((l) => l.id).filter((id): id is string => id !== null)
  return db
    .select({ id: participants.id, code: participants.code, consentStatus: participants.consentStatus })
    .from(participants)
    .where(and(eq(participants.labId, user.labId), ids.length ? notInArray(participants.id, ids) : undefined))
    .orderBy(asc(participants.code))
}

export class InviteError extends Error {
  constructor(
    readonly field: string,
    message: string,
  ) {
    super(message)
  }
}

export async function invite(deps: { db: Database; mail: Mailer; publicUrl: string }, user: SessionUser, input: z.infer<typeof inviteSchema>) {
  let participantId: string | null = null
  if (input.role === 'participant') {
    const free = await unlinkedParticipants(deps.db, user)
    const match = free.find((p) => p.id === input.participantId)
    if (!match) throw new InviteError('participantId', 'That participant is not in your lab or already has an account')
    participantId = match.id
  }
  try {
    return await invitePerson(deps, { labId: user.labId, invitedBy: user.id, email: input.email, name: input.name, role: input.role, participantId })
  } catch (error) {
    if (error instanceof PeopleError) throw new InviteError('email', error.message)
    throw error
  }
}

export class PersonStatusError extends Error {}

export async function setPersonActive(db: Database, user: SessionUser, targetId: string, active: boolean) {
  if (!isUuid(targetId)) notFound('account')
  if (targetId === user.id) throw new PersonStatusError('You cannot deactivate your own account; ask another supervisor.')
  const [target] = await db.select().from(users).where(and(eq(users.id, targetId), eq(users.labId, user.labId)))
  if (!target) notFound('account')
  await db.update(users).set({ active }).where(eq(users.id, target.id))
  let tokensRevoked = 0
  if (!active) {
    const now = new Date()
    const revoked = await db
      .update(apiTokens)
      .set({ revokedAt: now })
      .where(and(eq(apiTokens.userId, target.id), isNull(apiTokens.revokedAt)))
      .returning({ id: apiTokens.id })
    tokensRevoked = revoked.length
    await db.update(authTokens).set({ usedAt: now }).where(and(eq(authTokens.userId, target.id), isNull(authTokens.usedAt)))
  }
  await audit(db, {
    labId: user.labId,
    actorId: user.id,
    action: active ? 'person.reactivated' : 'person.deactivated',
    target: target.email,
    detail: active ? { role: target.role } : { role: target.role, apiTokensRevoked: tokensRevoked },
  })
  return target
}
