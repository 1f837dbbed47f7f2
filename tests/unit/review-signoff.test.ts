// Sign-off: supervisors only, a reason for a flag, the record locked afterwards, later
// annotations kept as corrections, and every change in the audit log. Participant progress:
// a participant sees only their own.
import { and, eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { annotations, auditEvents, participants, sessions } from '~/db/schema'
import { action as reviewAction } from '~/routes/review.sessions.$sessionId'
import { loader as progressLoader } from '~/routes/review.participants.$participantId'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'
import { insertExportRun } from '../fixtures/review/export-run'

let t: TestServices
let sessionId: string

const post = async (role: 'supervisor' | 'operator' | 'developer' | 'participant', form: Record<string, string>) =>
  call(reviewAction as never, request(`/review/sessions/${sessionId}`, { cookie: await cookieFor(t, role), form }), t.context, { sessionId })

beforeAll(async () => {
  t = await createTestServices()
  ;({ sessionId } = await insertExportRun(t.handle.db, t.labId))
})

afterAll(async () => {
  await t?.close()
})

describe('sign-off', () => {
  it('is refused to operators, developers and participants', async () => {
    for (const role of ['operator', 'developer', 'participant'] as const) {
      expect((await post(role, { intent: 'signoff', state: 'reviewed', comment: '' })).status).toBe(403)
    }
    const [row] = await t.handle.db.select().from(sessions).where(eq(sessions.id, sessionId))
    expect(row.signoffState).toBe('pending')
    expect(row.lockedAt).toBeNull()
  })

  it('needs a reason to flag', async () => {
    const res = await post('supervisor', { intent: 'signoff', state: 'flagged', comment: ' ' })
    expect(res.status).toBe(400)
    expect((res.data as { errors: Record<string, string[]> }).errors.comment[0]).toMatch(/why/)
  })

  it('locks the record, audits the change, and turns later annotations into corrections', async () => {
    const db = t.handle.db
    expect((await post('operator', { intent: 'annotate', text: 'Electrode C4 re-gelled at minute 3.' })).status).toBe(200)
    expect((await post('supervisor', { intent: 'signoff', state: 'flagged', comment: 'C4 noisy in run 1' })).status).toBe(200)
    const [row] = await db.select().from(sessions).where(eq(sessions.id, sessionId))
    expect(row.signoffState).toBe('flagged')
    expect(row.lockedAt).not.toBeNull()
    expect((await post('operator', { intent: 'annotate', text: 'C4 was fine after re-gelling.' })).status).toBe(200)
    const notes = await db.select().from(annotations).where(eq(annotations.sessionId, sessionId)).orderBy(annotations.createdAt)
    expect(notes.filter((n) => n.text.startsWith('Electrode') || n.text.startsWith('C4')).map((n) => n.correction)).toEqual([false, true])
    // A second sign-off keeps the lock time and records what it replaced.
    expect((await post('supervisor', { intent: 'signoff', state: 'reviewed', comment: 'Checked after correction' })).status).toBe(200)
    const [again] = await db.select().from(sessions).where(eq(sessions.id, sessionId))
    expect(again.lockedAt?.getTime()).toBe(row.lockedAt?.getTime())
    const trail = await db.select().from(auditEvents).where(and(eq(auditEvents.target, sessionId), eq(auditEvents.action, 'session.signoff')))
    expect(trail.map((a) => [a.detail.previousState, a.detail.state])).toEqual([
      ['pending', 'flagged'],
      ['flagged', 'reviewed'],
    ])
    const corrections = await db.select().from(auditEvents).where(eq(auditEvents.action, 'annotation.correction'))
    expect(corrections).toHaveLength(1)
  })
})

describe('participant progress', () => {
  it('shows a participant their own progress and no one else’s', async () => {
    const db = t.handle.db
    const [own] = await db.select().from(participants).where(eq(participants.code, 'HS-014'))
    const [other] = await db.select().from(participants).where(eq(participants.code, 'HS-022'))
    const cookie = await cookieFor(t, 'participant')
    const mine = await call(progressLoader as never, request(`/review/participants/${own.id}`, { cookie }), t.context, { participantId: own.id })
    expect(mine.status).toBe(200)
    const theirs = await call(progressLoader as never, request(`/review/participants/${other.id}`, { cookie }), t.context, { participantId: other.id })
    expect(theirs.status).toBe(404)
    const staff = await call(progressLoader as never, request(`/review/participants/${other.id}`, { cookie: await cookieFor(t, 'supervisor') }), t.context, { participantId: other.id })
    expect(staff.status).toBe(200)
  })
})
