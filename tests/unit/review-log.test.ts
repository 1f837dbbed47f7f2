// Session log (filters, sort, pagination), the /api/v1/sessions route's access rules, and the
// review metrics against scikit-learn and the Wolpaw formula.
import { eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { apiTokens, labs, montages, participants, protocols, runs, sessions, trials, users } from '~/db/schema'
import { hashToken, newToken } from '~/server/passwords.server'
import { feedbackRunMetrics, listSessions, periodogram, sessionLogQuery, sessionReview } from '~/server/review.server'
import { loader as sessionsApi } from '~/routes/api.v1.sessions'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'
import reference from '../fixtures/review/review_metrics.json'

let t: TestServices
let token: string
let otherLabToken: string
let otherLabSessionId: string
const ids: string[] = []

async function tokenFor(labId: string, userId: string): Promise<string> {
  const secret = newToken('tapi')
  await t.handle.db.insert(apiTokens).values({ labId, userId, name: 'test', prefix: secret.slice(0, 8), tokenHash: hashToken(secret) })
  return secret
}

beforeAll(async () => {
  t = await createTestServices()
  const db = t.handle.db
  const [p1, p2] = await db.select().from(participants).where(eq(participants.labId, t.labId)).orderBy(participants.code)
  const [protocol] = await db.select().from(protocols).where(eq(protocols.labId, t.labId))
  const [montage] = await db.select().from(montages).where(eq(montages.labId, t.labId))
  const [operator] = await db.select().from(users).where(eq(users.role, 'operator'))
  const [developer] = await db.select().from(users).where(eq(users.role, 'developer'))
  // 30 sessions over 30 days, alternating participants, statuses and sign-off states.
  for (let i = 0; i < 30; i++) {
    const [s] = await db
      .insert(sessions)
      .values({
        labId: t.labId,
        participantId: i % 2 ? p2.id : p1.id,
        operatorId: i % 3 === 0 ? null : operator.id,
        protocolId: protocol.id,
        montageId: montage.id,
        status: i % 5 === 0 ? 'imported' : 'ended',
        signoffState: i % 4 === 0 ? 'reviewed' : i % 4 === 1 ? 'flagged' : 'pending',
        createdAt: new Date(Date.UTC(2026, 9, 1 + i, 10)),
      })
      .returning()
    ids.push(s.id)
  }
  token = await tokenFor(t.labId, developer.id)
  // A second lab with its own developer, participant and session.
  const [lab2] = await db.insert(labs).values({ name: 'Other lab' }).returning()
  const [dev2] = await db.insert(users).values({ labId: lab2.id, email: 'dev2@other.example', name: 'Dev Two', role: 'developer' }).returning()
  const [pp] = await db.insert(participants).values({ labId: lab2.id, code: 'OT-1' }).returning()
  const [pr] = await db.insert(protocols).values({ labId: lab2.id, name: 'Other', classes: ['left', 'right'] }).returning()
  const [mo] = await db.insert(montages).values({ labId: lab2.id, name: 'm', channels: [] }).returning()
  const [s2] = await db.insert(sessions).values({ labId: lab2.id, participantId: pp.id, protocolId: pr.id, montageId: mo.id, status: 'ended' }).returning()
  otherLabSessionId = s2.id
  otherLabToken = await tokenFor(lab2.id, dev2.id)
})

afterAll(async () => {
  await t?.close()
})

describe('session log query', () => {
  it('pages through every session exactly once in the chosen order', async () => {
    const seen: string[] = []
    for (let page = 1; page <= 4; page++) {
      const r = await listSessions(t.handle.db, t.labId, sessionLogQuery.parse({ page: String(page), pageSize: '8', sort: 'created', dir: 'asc' }))
      expect(r.total).toBe(30)
      expect(r.pageCount).toBe(4)
      seen.push(...r.rows.map((row) => row.id))
    }
    expect(seen).toEqual(ids)
  })

  it('filters by participant, status, sign-off and an inclusive date range', async () => {
    const db = t.handle.db
    const [p1] = await db.select().from(participants).where(eq(participants.code, 'HS-014'))
    const byParticipant = await listSessions(db, t.labId, sessionLogQuery.parse({ participant: p1.id, pageSize: '100' }))
    expect(byParticipant.total).toBe(15)
    expect(byParticipant.rows.every((r) => r.participantCode === 'HS-014')).toBe(true)
    const flaggedImported = await listSessions(db, t.labId, sessionLogQuery.parse({ status: 'imported', signoff: 'flagged', pageSize: '100' }))
    // i % 5 == 0 and i % 4 == 1: i = 5, 25
    expect(flaggedImported.total).toBe(2)
    const range = await listSessions(db, t.labId, sessionLogQuery.parse({ from: '2026-10-03', to: '2026-10-05', pageSize: '100' }))
    expect(range.total).toBe(3)
  })

  it('sorts by participant code with a stable tie-break', async () => {
    const r = await listSessions(t.handle.db, t.labId, sessionLogQuery.parse({ sort: 'participant', dir: 'desc', pageSize: '100' }))
    expect(r.rows.slice(0, 15).every((row) => row.participantCode === 'HS-022')).toBe(true)
  })

  it('refuses a reversed date range and an unknown sort', () => {
    expect(sessionLogQuery.safeParse({ from: '2026-10-05', to: '2026-10-01' }).success).toBe(false)
    expect(sessionLogQuery.safeParse({ sort: 'password' }).success).toBe(false)
  })
})

describe('GET /api/v1/sessions', () => {
  async function get(path: string, init: { cookie?: string; token?: string } = {}) {
    const headers: Record<string, string> = init.token ? { Authorization: `Bearer ${init.token}` } : {}
    const res = await call(sessionsApi as never, request(path, { cookie: init.cookie, headers }), t.context)
    return res
  }

  it('answers a developer token with the lab’s sessions only', async () => {
    const res = (await sessionsApi({ request: request('/api/v1/sessions?pageSize=100&sort=created&dir=asc', { headers: { Authorization: `Bearer ${token}` } }), context: t.context, params: {} } as never)) as Response
    expect(res.status).toBe(200)
    const body = (await res.json()) as { rows: { id: string }[]; total: number }
    expect(body.total).toBe(30)
    expect(body.rows.map((r) => r.id)).toEqual(ids)
  })

  it('is reachable with a supervisor cookie, refused for a participant, and 401 without credentials', async () => {
    expect((await get('/api/v1/sessions', { cookie: await cookieFor(t, 'supervisor') })).status).toBe(200)
    expect((await get('/api/v1/sessions', { cookie: await cookieFor(t, 'participant') })).status).toBe(403)
    expect((await get('/api/v1/sessions')).status).toBe(401)
    expect((await get('/api/v1/sessions', { token: 'tapi_not-a-token' })).status).toBe(401)
  })

  it('validates the query with a message per parameter', async () => {
    const res = await get('/api/v1/sessions?pageSize=5000&status=exploded', { token })
    expect(res.status).toBe(400)
    expect(Object.keys((res.data as { errors: Record<string, string> }).errors).sort()).toEqual(['pageSize', 'status'])
  })

  it('never shows another lab’s sessions to a token of that lab, nor ours to theirs', async () => {
    const ours = await listSessions(t.handle.db, t.labId, sessionLogQuery.parse({ pageSize: '100' }))
    expect(ours.rows.map((r) => r.id)).not.toContain(otherLabSessionId)
    const res = await sessionsApi({ request: request('/api/v1/sessions?pageSize=100', { headers: { Authorization: `Bearer ${otherLabToken}` } }), context: t.context, params: {} } as never)
    const body = (await (res as Response).json()) as { rows: { id: string }[]; total: number }
    expect(body.total).toBe(1)
    expect(body.rows[0].id).toBe(otherLabSessionId)
  })
})

describe('review metrics', () => {
  it('equal scikit-learn and the Wolpaw ITR for a feedback run (fixture from make_review_metrics.py)', async () => {
    const db = t.handle.db
    const [run] = await db.insert(runs).values({ sessionId: ids[0], kind: 'feedback', index: 1, status: 'completed', rateHz: reference.rateHz }).returning()
    await db.insert(trials).values(
      reference.trials.map((r) => ({ runId: run.id, index: r.index, label: r.label, cueSample: r.cueSample, outcome: r.outcome as 'hit' | 'miss' | 'timeout', decidedClass: r.decidedClass })),
    )
    const review = await sessionReview(db, ids[0])
    const m = review!.runs.find((r) => r.id === run.id)!.metrics!
    // sklearn.metrics.accuracy_score / cohen_kappa_score / confusion_matrix
    expect(m.decided).toBe(reference.decided)
    expect(m.timeouts).toBe(reference.timeouts)
    expect(m.accuracy).toBeCloseTo(reference.accuracy, 12)
    expect(m.kappa).toBeCloseTo(reference.kappa, 12)
    expect(m.confusion).toEqual(reference.confusion)
    // Wolpaw et al. 2000, bits per trial; per minute with the cue-to-cue interval (9.5 s)
    expect(m.secondsPerTrial).toBeCloseTo(reference.secondsPerTrial, 9)
    expect(m.itrBitsPerTrial).toBeCloseTo(reference.itrBitsPerTrial, 12)
    expect(m.itrBitsPerMinute).toBeCloseTo(reference.itrBitsPerMinute, 9)
  })

  it('has no figures when no trial was decided', () => {
    expect(feedbackRunMetrics(['left', 'right'], [{ index: 0, label: 'left', cueSample: 0, endSample: null, outcome: 'timeout', decidedClass: null }], 9)).toBeNull()
  })
})

describe('per-class spectra', () => {
  it('equal scipy.signal.periodogram with a Hann window and density scaling', () => {
    const ref = reference.periodogram
    const ours = periodogram(Float64Array.from(ref.x), ref.rateHz, ref.freqs)
    ours.forEach((v, i) => expect(v / ref.density[i]).toBeCloseTo(1, 9))
  })
})
