// A session end to end through the real ingest and the live routes: calibration run with
// balanced cues, training on it in a worker, activation, a feedback run with pause, resume and
// stop, and the streams the console and the feedback view read.
import { and, asc, eq, sql } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, test } from 'vitest'
import { decisions, decoders, recordingChunks, runs, sessionEvents, sessions, trials } from '~/db/schema'
import * as annotationsRoute from '~/routes/live.$sessionId.annotations'
import * as decoderRoute from '~/routes/live.$sessionId.decoder'
import * as feedbackLinkRoute from '~/routes/live.$sessionId.feedback-link'
import * as feedbackRoute from '~/routes/live.$sessionId.feedback'
import * as operatorRoute from '~/routes/live.$sessionId.operator'
import * as runsRoute from '~/routes/live.$sessionId.runs'
import * as trainingRoute from '~/routes/live.$sessionId.training'
import * as tokensRoute from '~/routes/live.$sessionId.device-tokens'
import { createOnlineDecoder } from '~/engine/online'
import type { Decoder } from '~/engine/decoder'
import { call, cookieFor, request } from '../support/services'
import { readEvents, sleep, startLiveHarness, streamRealTime, TestDevice, type LiveHarness } from './live-support'

let h: LiveHarness
let operatorCookie: string
let s: Awaited<ReturnType<LiveHarness['createSession']>>
let device: TestDevice
let stream: { stop(): void }
let calibrationRunId: string

beforeAll(async () => {
  h = await startLiveHarness(4230, { flushIntervalMs: 50 })
  operatorCookie = await cookieFor(h.t, 'operator')
  s = await h.createSession({ trialsPerClass: 5 })
}, 120_000)

afterAll(async () => {
  stream?.stop()
  await h?.close()
})

async function post(route: { action: (args: never) => unknown }, path: string, form: Record<string, string | string[]>, cookie = operatorCookie) {
  let res: Response
  try {
    res = (await route.action({ request: request(path, { cookie, form }), context: h.t.context, params: { sessionId: s.sessionId } } as never)) as Response
  } catch (thrown) {
    if (!(thrown instanceof Response)) throw thrown
    res = thrown
  }
  return { status: res.status, body: (await res.json()) as Record<string, unknown> }
}

describe('run controls refuse what would leave an inconsistent record', () => {
  test('no device connected: 409 with a clear message', async () => {
    const r = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'start', kind: 'calibration' })
    expect(r.status).toBe(409)
    expect(r.body.message).toMatch(/no device is connected/)
  })

  test('a participant may not control runs (403); another lab sees no session (404)', async () => {
    const participant = await cookieFor(h.t, 'participant')
    const r = await call(runsRoute.action as never, request(`/live/${s.sessionId}/runs`, { cookie: participant, form: { intent: 'start', kind: 'calibration' } }), h.t.context, { sessionId: s.sessionId })
    expect(r.status).toBe(403)
    const signedOut = await call(runsRoute.action as never, request(`/live/${s.sessionId}/runs`, { form: { intent: 'stop' } }), h.t.context, { sessionId: s.sessionId })
    expect(signedOut.status).toBe(401)
    const unknown = await call(runsRoute.action as never, request(`/live/00000000-0000-4000-8000-000000000000/runs`, { cookie: operatorCookie, form: { intent: 'stop' } }), h.t.context, { sessionId: '00000000-0000-4000-8000-000000000000' })
    expect(unknown.status).toBe(404)
  })

  test('device tokens through the route: created once, listed without the secret', async () => {
    const created = await post(tokensRoute, `/live/${s.sessionId}/device-tokens`, { intent: 'create', hours: '1' })
    expect(created.status).toBe(200)
    expect(String(created.body.token)).toMatch(/^tdev_/)
    const res = (await tokensRoute.loader({ request: request(`/live/${s.sessionId}/device-tokens`, { cookie: operatorCookie }), context: h.t.context, params: { sessionId: s.sessionId } } as never)) as Response
    const listed = (await res.json()) as { tokens: Record<string, unknown>[] }
    expect(listed.tokens.length).toBeGreaterThanOrEqual(2)
    expect(JSON.stringify(listed)).not.toContain(String(created.body.token))
  })
})

describe('calibration run', () => {
  test('balanced randomised cues in phase order, every sample recorded, trials stored', async () => {
    device = await TestDevice.connect(h.ingestUrl)
    await device.start(s.token, s.channels)
    stream = streamRealTime(device, s.channels.length)
    await sleep(300)
    // The operator stream, through the route, from before the run starts.
    const opController = new AbortController()
    const opResponse = (await operatorRoute.loader({
      request: new Request(`http://tiller.test/live/${s.sessionId}/operator`, { headers: { Cookie: operatorCookie }, signal: opController.signal }),
      context: h.t.context,
      params: { sessionId: s.sessionId },
    } as never)) as Response
    expect(opResponse.headers.get('Content-Type')).toMatch(/text\/event-stream/)
    const opEvents = readEvents(opResponse, (ev) => ev.some((e) => e.event === 'run' && (e.data as { status: string }).status === 'completed'), 40_000)

    const started = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'start', kind: 'calibration' })
    expect(started.status).toBe(200)
    calibrationRunId = (started.body.run as { id: string }).id
    const again = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'start', kind: 'calibration' })
    expect(again.status).toBe(409)

    await device.next((m) => m.type === 'run' && m.state === 'completed', 40_000)
    const events = await opEvents
    opController.abort()

    // Cue order per trial: fixation, cue, imagery, rest (the protocol's phases).
    const cues = device.messages.filter((m): m is Extract<typeof m, { type: 'cue' }> => m.type === 'cue' && m.phase !== 'end')
    expect(cues).toHaveLength(40)
    for (let t = 0; t < 10; t++) expect(cues.slice(t * 4, t * 4 + 4).map((c) => c.phase)).toEqual(['fixation', 'cue', 'imagery', 'rest'])
    // Balanced: 5 of each class.
    const labels = cues.filter((c) => c.phase === 'cue').map((c) => c.label)
    expect(labels.filter((l) => l === 'left')).toHaveLength(5)
    expect(labels.filter((l) => l === 'right')).toHaveLength(5)

    const [run] = await h.t.handle.db.select().from(runs).where(eq(runs.id, calibrationRunId))
    expect(run.status).toBe('completed')
    const stored = await h.t.handle.db.select().from(trials).where(eq(trials.runId, calibrationRunId)).orderBy(asc(trials.index))
    expect(stored.map((t) => t.outcome)).toEqual(new Array(10).fill('recorded'))
    expect(stored.map((t) => t.label)).toEqual(labels)
    // Phase lengths in samples at 500 Hz: fixation 0.2 s, cue 0.2 s, imagery 0.6 s (the test protocol).
    for (const t of stored) expect(t.endSample! - t.cueSample!).toBe(0.2 * 500 + 0.6 * 500)
    const [{ total }] = await h.t.handle.db.select({ total: sql<number>`sum(${recordingChunks.sampleCount})::int` }).from(recordingChunks).where(eq(recordingChunks.runId, calibrationRunId))
    expect(total).toBe(run.sampleCount)
    expect(run.sampleCount).toBeGreaterThanOrEqual(stored[9].endSample!)

    // The console saw the snapshot first, then cues, trials and signal frames.
    expect(events[0].event).toBe('snapshot')
    const names = new Set(events.map((e) => e.event))
    for (const name of ['cue', 'trial', 'run', 'signal', 'quality']) expect(names).toContain(name)
    const signal = events.find((e) => e.event === 'signal')!.data as { raw: number[][]; displayRateHz: number; filtered: number[][] | null }
    expect(signal.raw).toHaveLength(16)
    expect(signal.displayRateHz).toBe(125)
    expect(signal.filtered).not.toBeNull()
  }, 60_000)

  test('training on the run (in a worker) stores a decoder with its method comparison', async () => {
    const listed = (await trainingRoute.loader({ request: request(`/live/${s.sessionId}/training`, { cookie: operatorCookie }), context: h.t.context, params: { sessionId: s.sessionId } } as never)) as Response
    const { runs: trainable } = (await listed.json()) as { runs: { id: string; kind: string }[] }
    expect(trainable.map((r) => r.id)).toContain(calibrationRunId)
    const r = await post(trainingRoute, `/live/${s.sessionId}/training`, { runIds: [calibrationRunId], method: 'csp' })
    expect(r.status).toBe(200)
    const done = await h.live.waitForTraining(String(r.body.jobId), 60_000)
    expect(done.error).toBeNull()
    expect(done.state).toBe('done')
    const [row] = await h.t.handle.db.select().from(decoders).where(eq(decoders.id, done.decoderId!))
    expect(row.method).toBe('csp')
    expect(row.trainedOnRunIds).toEqual([calibrationRunId])
    expect(Array.isArray(row.comparison)).toBe(true)
    expect((row.model as { channels: string[] }).channels).toEqual(s.channels)
    const activated = await post(decoderRoute, `/live/${s.sessionId}/decoder`, { decoderId: row.id })
    expect(activated.status).toBe(200)
    const [session] = await h.t.handle.db.select().from(sessions).where(eq(sessions.id, s.sessionId))
    expect(session.activeDecoderId).toBe(row.id)
  }, 90_000)

  test('training on nothing or on another participant’s run is a clear 4xx', async () => {
    const none = await post(trainingRoute, `/live/${s.sessionId}/training`, {})
    expect(none.status).toBe(400)
    const bogus = await post(trainingRoute, `/live/${s.sessionId}/training`, { runIds: ['00000000-0000-4000-8000-000000000001'] })
    expect(bogus.status).toBe(422)
  })
})

describe('feedback run', () => {
  test('decisions for every block, trial outcomes, pause/resume/stop leave a consistent record', async () => {
    // The participant's screen, opened with a feedback link.
    const link = await post(feedbackLinkRoute, `/live/${s.sessionId}/feedback-link`, { intent: 'create' })
    const fbController = new AbortController()
    const fbResponse = (await feedbackRoute.loader({
      request: new Request(`http://tiller.test/live/${s.sessionId}/feedback?token=${link.body.token}`, { signal: fbController.signal }),
      context: h.t.context,
      params: { sessionId: s.sessionId },
    } as never)) as Response
    const fbEvents = readEvents(fbResponse, (ev) => ev.filter((e) => e.event === 'trial').length >= 2, 30_000)
    const badLink = await call(feedbackRoute.loader as never, request(`/live/${s.sessionId}/feedback?token=tfbk_wrong`), h.t.context, { sessionId: s.sessionId })
    expect(badLink.status).toBe(404)

    const started = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'start', kind: 'feedback', trialsPerClass: '3', smoothing: '0.5' })
    expect(started.status).toBe(200)
    const runId = (started.body.run as { id: string }).id
    const feedbackSeen = await fbEvents
    fbController.abort()

    await post(annotationsRoute, `/live/${s.sessionId}/annotations`, { text: 'participant reports drowsiness' })
    const paused = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'pause' })
    expect((paused.body.run as { status: string }).status).toBe('paused')
    const [pausedRow] = await h.t.handle.db.select().from(runs).where(eq(runs.id, runId))
    expect(pausedRow.status).toBe('paused')
    await sleep(400)
    const resumed = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'resume' })
    expect((resumed.body.run as { status: string }).status).toBe('running')
    await sleep(1500)
    const stopped = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'stop' })
    expect((stopped.body.run as { status: string }).status).toBe('stopped')

    const [run] = await h.t.handle.db.select().from(runs).where(eq(runs.id, runId))
    expect(run.status).toBe('stopped')
    expect(run.endedAt).not.toBeNull()
    const stored = await h.t.handle.db.select().from(trials).where(eq(trials.runId, runId))
    expect(stored.length).toBeGreaterThanOrEqual(2)
    for (const t of stored) expect(['hit', 'miss', 'timeout']).toContain(t.outcome)
    // Every decision made is in the log, with the cue in force and the processing latency.
    const live = await h.live.getSession(s.sessionId)
    const [{ n }] = await h.t.handle.db.select({ n: sql<number>`count(*)::int` }).from(decisions).where(eq(decisions.runId, runId))
    expect(n).toBeGreaterThan(20)
    const logged = await h.t.handle.db.select().from(decisions).where(eq(decisions.runId, runId))
    expect(logged.some((d) => d.cue !== null && d.trialIndex !== null)).toBe(true)
    expect(logged.every((d) => d.latencyUs > 0)).toBe(true)
    expect(live.decisionsLogged).toBe(live.counts.decisionsMade)
    // Replaying the run's recording through a fresh copy of the decoder gives the logged numbers.
    const [decoderRow] = await h.t.handle.db.select().from(decoders).where(eq(decoders.id, run.decoderId!))
    const online = createOnlineDecoder(decoderRow.model as unknown as Decoder)
    const chunks = await h.t.handle.db.select().from(recordingChunks).where(eq(recordingChunks.runId, runId)).orderBy(asc(recordingChunks.firstSample))
    const C = s.channels.length
    const all = new Float32Array(run.sampleCount * C)
    for (const c of chunks) all.set(new Float32Array(new Uint8Array(c.data).slice().buffer), c.firstSample * C)
    let cursor = 0
    const ordered = [...logged].sort((a, b) => a.sample - b.sample)
    for (const d of ordered) {
      const upTo = d.sample + 1
      const out = online.push(all.subarray(cursor * C, upTo * C), upTo - cursor)
      cursor = upTo
      expect(out.output).toBeCloseTo(d.output, 9)
      expect(out.className).toBe(d.decidedClass)
    }
    const kinds = (await h.t.handle.db.select().from(sessionEvents).where(and(eq(sessionEvents.sessionId, s.sessionId), eq(sessionEvents.runId, runId)))).map((e) => e.kind)
    expect(kinds).toEqual(expect.arrayContaining(['run_started', 'run_paused', 'run_resumed', 'run_stopped']))

    // The feedback view got cues and feedback, and nothing of the console's signals.
    const names = new Set(feedbackSeen.map((e) => e.event))
    expect(feedbackSeen[0].event).toBe('snapshot')
    expect(names).toContain('cue')
    expect(names).toContain('feedback')
    expect(names).not.toContain('signal')
    expect(names).not.toContain('decision')
    const fb = feedbackSeen.find((e) => e.event === 'feedback')!.data as { control: number }
    expect(Math.abs(fb.control)).toBeLessThanOrEqual(1)
  }, 60_000)

  test('a feedback run after a stop starts cleanly; the device link survives every run change', async () => {
    const r = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'start', kind: 'feedback', trialsPerClass: '1' })
    expect(r.status).toBe(200)
    await device.next((m) => m.type === 'run' && m.state === 'completed', 20_000)
    expect(device.ws.readyState).toBe(device.ws.OPEN)
    expect(device.acks.at(-1)!.durableSample).toBeGreaterThan(0)
  }, 30_000)

  test('end-session stops everything and closes the link with 1000', async () => {
    const r = await post(runsRoute, `/live/${s.sessionId}/runs`, { intent: 'end-session' })
    expect(r.status).toBe(200)
    const closed = await device.closed
    expect(closed.code).toBe(1000)
    const [session] = await h.t.handle.db.select().from(sessions).where(eq(sessions.id, s.sessionId))
    expect(session.status).toBe('ended')
  })
})
