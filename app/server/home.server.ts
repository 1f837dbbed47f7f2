// Figures for each role's home page.
import { and, count, desc, eq } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { participants, protocols, sessions, users } from '~/db/schema'
import type { SessionUser } from '~/server/services'

export async function homeSummary(db: Database, user: SessionUser) {
  const lab = user.labId
  const [[p], [s], [pending], [people], [proto]] = await Promise.all([
    db.select({ n: count() }).from(participants).where(eq(participants.labId, lab)),
    db.select({ n: count() }).from(sessions).where(eq(sessions.labId, lab)),
    db.select({ n: count() }).from(sessions).where(and(eq(sessions.labId, lab), eq(sessions.status, 'ended'), eq(sessions.signoffState, 'pending'))),
    db.select({ n: count() }).from(users).where(eq(users.labId, lab)),
    db.select({ n: count() }).from(protocols).where(eq(protocols.labId, lab)),
  ])
  const recent = await db
    .select({ id: sessions.id, status: sessions.status, createdAt: sessions.createdAt, participant: participants.code, signoff: sessions.signoffState })
    .from(sessions)
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .where(eq(sessions.labId, lab))
    .orderBy(desc(sessions.createdAt))
    .limit(8)
  return {
    participants: p?.n ?? 0,
    sessions: s?.n ?? 0,
    awaitingSignoff: pending?.n ?? 0,
    people: people?.n ?? 0,
    protocols: proto?.n ?? 0,
    recent: recent.map((r) => ({ ...r, createdAt: r.createdAt.toISOString() })),
  }
}
