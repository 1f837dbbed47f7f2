// Two labs for access tests: the seeded demo lab ("A") and a second lab ("B") with one account
// per role, its own participant, montage, protocol and session, plus sessions in lab A for
// both demo participants and a developer API token in each lab.
import { eq } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { apiTokens, decoders, labs, montages, participants, protocols, runs, sessions, users } from '~/db/schema'
import { montagePreset, presetName } from '~/engine/montage'
import { DEMO_ACCOUNTS } from '~/server/demo.server'
import { hashToken, newToken } from '~/server/passwords.server'
import { createUser } from '~/server/people.server'
import type { Role } from '~/server/services'

export interface LabFixture {
  labId: string
  userIds: Record<Role, string>
  /** The participant linked to the participant account, and one more. */
  participantId: string
  otherParticipantId: string
  montageId: string
  protocolId: string
  /** A session of the linked participant, and one of the other participant. */
  sessionId: string
  otherSessionId: string
  /** A finished calibration run of the first session, and a decoder trained on it. */
  runId: string
  decoderId: string
  /** Bearer API tokens (plain text) per user role. */
  apiTokens: Record<Role, string>
  /** Every id and code of this lab, to check that nothing of it leaks to the other lab. */
  secrets: string[]
}

const ROLES: Role[] = ['supervisor', 'operator', 'participant', 'developer']

async function tokenFor(db: Database, labId: string, userId: string): Promise<string> {
  const token = newToken('tlr')
  await db.insert(apiTokens).values({ labId, userId, name: 'access test', prefix: token.slice(0, 8), tokenHash: hashToken(token) })
  return token
}

async function sessionFor(db: Database, labId: string, participantId: string, montageId: string, protocolId: string, operatorId: string) {
  const [row] = await db.insert(sessions).values({ labId, participantId, montageId, protocolId, operatorId, notes: 'access test' }).returning({ id: sessions.id })
  return row.id
}

async function runAndDecoder(db: Database, labId: string, participantId: string, sessionId: string) {
  const [run] = await db
    .insert(runs)
    .values({ sessionId, kind: 'calibration', index: 1, status: 'completed', rateHz: 500, channels: ['C3', 'Cz', 'C4'], startedAt: new Date(), endedAt: new Date() })
    .returning({ id: runs.id })
  const [decoder] = await db
    .insert(decoders)
    .values({ labId, participantId, sessionId, version: 1, method: 'csp', trainedOnRunIds: [run.id], model: { classes: ['left', 'right'], channels: ['C3', 'Cz', 'C4'] } })
    .returning({ id: decoders.id })
  return { runId: run.id, decoderId: decoder.id }
}

async function completeTokens(db: Database, labId: string, userIds: Record<Role, string>) {
  const out = {} as Record<Role, string>
  for (const role of ROLES) out[role] = await tokenFor(db, labId, userIds[role])
  return out
}

export async function demoLabFixture(db: Database, labId: string): Promise<LabFixture> {
  const userIds = {} as Record<Role, string>
  for (const account of DEMO_ACCOUNTS) {
    const [u] = await db.select().from(users).where(eq(users.email, account.email))
    userIds[account.role] = u.id
  }
  const [linked] = await db.select().from(participants).where(eq(participants.code, 'HS-014'))
  const [other] = await db.select().from(participants).where(eq(participants.code, 'HS-022'))
  const [montage] = await db.select().from(montages).where(eq(montages.labId, labId))
  const [protocol] = await db.select().from(protocols).where(eq(protocols.labId, labId))
  const sessionId = await sessionFor(db, labId, linked.id, montage.id, protocol.id, userIds.operator)
  const otherSessionId = await sessionFor(db, labId, other.id, montage.id, protocol.id, userIds.operator)
  const { runId, decoderId } = await runAndDecoder(db, labId, linked.id, sessionId)
  return {
    labId,
    userIds,
    runId,
    decoderId,
    participantId: linked.id,
    otherParticipantId: other.id,
    montageId: montage.id,
    protocolId: protocol.id,
    sessionId,
    otherSessionId,
    apiTokens: await completeTokens(db, labId, userIds),
    secrets: [linked.id, other.id, montage.id, protocol.id, sessionId, otherSessionId, runId, decoderId, 'HS-014', 'HS-022', ...Object.values(userIds)],
  }
}

export async function createSecondLab(db: Database): Promise<LabFixture> {
  const [lab] = await db.insert(labs).values({ name: 'Second lab for access tests' }).returning()
  const [p, q] = await db
    .insert(participants)
    .values([
      { labId: lab.id, code: 'OT-001', handedness: 'right', consentStatus: 'given', consentDate: '2026-01-05' },
      { labId: lab.id, code: 'OT-002', handedness: 'left', consentStatus: 'given', consentDate: '2026-01-06' },
    ])
    .returning()
  const [montage] = await db
    .insert(montages)
    .values({ labId: lab.id, name: presetName(16), channels: montagePreset(16).map(({ name, x, y, z }) => ({ name, x, y, z })), reference: 'FCz', ground: 'AFz' })
    .returning()
  const [protocol] = await db.insert(protocols).values({ labId: lab.id, name: 'Other lab protocol', classes: ['left', 'right'] }).returning()
  const userIds = {} as Record<Role, string>
  for (const role of ROLES) {
    const row = await createUser(db, {
      labId: lab.id,
      email: `${role}@second-lab.example`,
      name: `Second lab ${role}`,
      role,
      password: `second-lab-${role}-password`,
      participantId: role === 'participant' ? p.id : null,
    })
    userIds[role] = (row as { id: string }).id
  }
  const sessionId = await sessionFor(db, lab.id, p.id, montage.id, protocol.id, userIds.operator)
  const otherSessionId = await sessionFor(db, lab.id, q.id, montage.id, protocol.id, userIds.operator)
  const { runId, decoderId } = await runAndDecoder(db, lab.id, p.id, sessionId)
  return {
    labId: lab.id,
    userIds,
    runId,
    decoderId,
    participantId: p.id,
    otherParticipantId: q.id,
    montageId: montage.id,
    protocolId: protocol.id,
    sessionId,
    otherSessionId,
    apiTokens: await completeTokens(db, lab.id, userIds),
    secrets: [p.id, q.id, montage.id, protocol.id, sessionId, otherSessionId, runId, decoderId, 'OT-001', 'OT-002', ...Object.values(userIds)],
  }
}
