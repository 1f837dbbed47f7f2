// The /api/v1 routes with developer bearer tokens: sessions, runs, paginated decisions and the
// NDJSON stream, recordings as EDF+, decoders; lab isolation. Run summary and weekly digest
// e-mails through nodemailer and the local fake SMTP server into the outbox.
import { eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { apiTokens, decisions, decoders, labs, outbox, participants, runs, users } from '~/db/schema'
import { readRecording } from '~/engine/formats/index'
import { createMailService, type MailService } from '~/server/mail.server'
import { hashToken, newToken } from '~/server/passwords.server'
import { sendRunSummary, sendWeeklyDigests, setWeeklyDigest } from '~/server/reports.server'
import { loader as sessionApi } from '~/routes/api.v1.sessions.$sessionId'
import { loader as runApi } from '~/routes/api.v1.runs.$runId'
import { loader as decisionsApi } from '~/routes/api.v1.runs.$runId_.decisions'
import { loader as ndjsonApi } from '~/routes/api.v1.runs.$runId_.decisions[.]ndjson'
import { loader as recordingApi } from '~/routes/api.v1.runs.$runId_.recording'
import { loader as decodersApi } from '~/routes/api.v1.decoders'
import { call, createTestServices, request, type TestServices } from '../support/services'
import { EXPORT_RUN, insertExportRun } from '../fixtures/review/export-run'

let t: TestServices
let token: string
let foreignToken: string
let runId: string
let sessionId: string
const DECISIONS = 2500

async function tokenFor(labId: string, userId: string) {
  const secret = newToken('tapi')
  await t.handle.db.insert(apiTokens).values({ labId, userId, name: 'test', prefix: secret.slice(0, 8), tokenHash: hashToken(secret) })
  return secret
}

const bearer = (path: string, tok = token) => request(path, { headers: { Authorization: `Bearer ${tok}` } })
const run = async (loader: unknown, path: string, params: Record<string, string>, tok = token) =>
  (await (loader as (a: unknown) => Promise<Response>)({ request: bearer(path, tok), context: t.context, params })) as Response

beforeAll(async () => {
  t = await createTestServices()
  const db = t.handle.db
  ;({ runId, sessionId } = await insertExportRun(db, t.labId))
  await db.update(runs).set({ kind: 'feedback' }).where(eq(runs.id, runId))
  const rows = Array.from({ length: DECISIONS }, (_, i) => ({
    sessionId, runId, trialIndex: null, sample: 15 + i, receivedAt: new Date(1_790_000_000_000 + i * 4), output: Math.sin(i), probability: 0.5, decidedClass: i % 2 ? 'right' : 'left', cue: null, latencyUs: 500 + i,
  }))
  for (let i = 0; i < rows.length; i += 500) await db.insert(decisions).values(rows.slice(i, i + 500))
  const [developer] = await db.select().from(users).where(eq(users.role, 'developer'))
  token = await tokenFor(t.labId, developer.id)
  const [lab2] = await db.insert(labs).values({ name: 'Other lab' }).returning()
  const [dev2] = await db.insert(users).values({ labId: lab2.id, email: 'dev@other.example', name: 'Dev', role: 'developer' }).returning()
  foreignToken = await tokenFor(lab2.id, dev2.id)
})

afterAll(async () => {
  await t?.close()
})

describe('/api/v1', () => {
  it('gives a session with its runs and the live stream links', async () => {
    const res = await run(sessionApi, `/api/v1/sessions/${sessionId}`, { sessionId })
    const body = await res.json()
    expect(body.runs).toHaveLength(1)
    expect(body.links.operatorStream).toBe(`http://tiller.test/live/${sessionId}/operator`)
  })

  it('gives a run with its trials and latency figures', async () => {
    const body = await (await run(runApi, `/api/v1/runs/${runId}`, { runId })).json()
    expect(body.trials).toHaveLength(EXPORT_RUN.cues.length)
    expect(body.latency.count).toBe(DECISIONS)
  })

  it('pages through the decision log without gaps or repeats', async () => {
    let path: string | null = `/api/v1/runs/${runId}/decisions?limit=1000`
    const samples: number[] = []
    let pages = 0
    while (path) {
      const body: { rows: { sample: number }[]; next: string | null } = await (await run(decisionsApi, path, { runId })).json()
      samples.push(...body.rows.map((r) => r.sample))
      path = body.next ? body.next.replace('http://tiller.test', '') : null
      pages++
    }
    expect(pages).toBe(3)
    expect(samples).toEqual(Array.from({ length: DECISIONS }, (_, i) => 15 + i))
  })

  it('streams the whole log as NDJSON, one decision per line', async () => {
    const res = await run(ndjsonApi, `/api/v1/runs/${runId}/decisions.ndjson`, { runId })
    expect(res.headers.get('Content-Type')).toMatch(/ndjson/)
    const lines = (await res.text()).trimEnd().split('\n')
    expect(lines).toHaveLength(DECISIONS)
    expect(JSON.parse(lines[DECISIONS - 1]).sample).toBe(15 + DECISIONS - 1)
  })

  it('downloads the recording as EDF+ that reads back with its cues', async () => {
    const res = await run(recordingApi, `/api/v1/runs/${runId}/recording?format=edf`, { runId })
    expect(res.status).toBe(200)
    const rec = readRecording(new Uint8Array(await res.arrayBuffer()), 'run.edf')
    expect(rec.cues).toEqual(EXPORT_RUN.cues)
  })

  it('lists the lab’s decoders', async () => {
    const [p] = await t.handle.db.select().from(participants).where(eq(participants.labId, t.labId))
    await t.handle.db.insert(decoders).values({ labId: t.labId, participantId: p.id, version: 1, method: 'csp', trainedOnRunIds: [runId], model: {} })
    const body = await (await run(decodersApi, `/api/v1/decoders?participant=${p.id}`, {})).json()
    expect(body.rows).toHaveLength(1)
  })

  it('answers 404 to a token of another lab for every id of ours', async () => {
    expect((await call(sessionApi as never, bearer(`/api/v1/sessions/${sessionId}`, foreignToken), t.context, { sessionId })).status).toBe(404)
    expect((await call(runApi as never, bearer(`/api/v1/runs/${runId}`, foreignToken), t.context, { runId })).status).toBe(404)
    expect((await call(ndjsonApi as never, bearer(`/api/v1/runs/${runId}/decisions.ndjson`, foreignToken), t.context, { runId })).status).toBe(404)
    expect((await call(recordingApi as never, bearer(`/api/v1/runs/${runId}/recording`, foreignToken), t.context, { runId })).status).toBe(404)
  })

  it('validates parameters (zod) and refuses revoked tokens', async () => {
    expect((await call(decisionsApi as never, bearer(`/api/v1/runs/${runId}/decisions?limit=0`), t.context, { runId })).status).toBe(400)
    expect((await call(recordingApi as never, bearer(`/api/v1/runs/${runId}/recording?format=wav`), t.context, { runId })).status).toBe(400)
    await t.handle.db.update(apiTokens).set({ revokedAt: new Date() }).where(eq(apiTokens.tokenHash, hashToken(foreignToken)))
    expect((await call(runApi as never, bearer(`/api/v1/runs/${runId}`, foreignToken), t.context, { runId })).status).toBe(401)
  })
})

describe('e-mailed reports', () => {
  let mail: MailService
  beforeAll(async () => {
    mail = await createMailService(t.services.config, t.handle.db)
  })
  afterAll(async () => {
    await mail?.close()
  })

  it('sends the run summary to the supervisor through the fake SMTP server into the outbox', async () => {
    const services = { ...t.services, mail: mail.mailer }
    expect(await sendRunSummary(services, runId)).toEqual({ sent: 1, failed: 0 })
    const [message] = await t.handle.db.select().from(outbox).where(eq(outbox.labId, t.labId))
    expect(message.to).toBe('maren.holt@harbourside.example')
    expect(message.subject).toMatch(/^Run 1 \(feedback\) of HS-014 completed/)
    expect(message.text).toContain(`http://tiller.test/review/sessions/${sessionId}`)
    expect(message.text).toContain('Decision latency: median')
  })

  it('sends the weekly digest once a week, only when switched on', async () => {
    const sent: string[] = []
    const services = { ...t.services, mail: { send: async (m: { subject: string }) => void sent.push(m.subject) } }
    expect(await sendWeeklyDigests(services)).toBe(0)
    const [supervisor] = await t.handle.db.select().from(users).where(eq(users.role, 'supervisor'))
    await setWeeklyDigest(t.handle.db, { id: supervisor.id, labId: t.labId, role: 'supervisor', email: supervisor.email, name: supervisor.name, participantId: null }, true, null)
    expect(await sendWeeklyDigests(services)).toBe(1)
    expect(sent[0]).toMatch(/^Weekly digest: \d+ sessions, \d+ awaiting sign-off$/)
    expect(await sendWeeklyDigests(services)).toBe(0)
    expect(await sendWeeklyDigests(services, new Date(Date.now() + 8 * 24 * 3600_000))).toBe(1)
  })
})
