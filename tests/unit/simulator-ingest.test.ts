// The simulated device against the real ingest (app/live) on a loopback port: it attaches to a
// session with a device token, follows the cues of a calibration run, and the server's
// handling of an injected fault shows in the device's fault log.
import { eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, test } from 'vitest'
import { CloseCode } from '~/ingest/protocol'
import { trials } from '~/db/schema'
import * as runsRoute from '~/routes/live.$sessionId.runs'
import { startLiveDevice, type LiveDevice } from '../../simulator/live-device'
import { cookieFor, request } from '../support/services'
import { startLiveHarness, type LiveHarness } from './live-support'

let h: LiveHarness
let cookie: string
let s: Awaited<ReturnType<LiveHarness['createSession']>>
let device: LiveDevice | undefined

beforeAll(async () => {
  h = await startLiveHarness(4160, { flushIntervalMs: 50 })
  cookie = await cookieFor(h.t, 'operator')
  s = await h.createSession({ trialsPerClass: 3, timing: { fixationSeconds: 0.5, cueSeconds: 0.5, imagerySeconds: 1, restSeconds: 0.3, restJitterSeconds: 0.1 } })
}, 120_000)

afterAll(async () => {
  await device?.stop()
  await h?.close()
})

const waitFor = async (condition: () => boolean, timeoutMs: number) => {
  const start = Date.now()
  while (!condition()) {
    if (Date.now() - start > timeoutMs) throw new Error('timed out waiting')
    await new Promise((r) => setTimeout(r, 20))
  }
}

describe('simulated device on the real ingest', () => {
  test('attaches with the device token and streams', async () => {
    device = startLiveDevice({ url: h.ingestUrl, token: s.token, channels: s.channels, rateHz: 250, seed: 41, faults: { reconnectDelayMs: 200 } })
    let sessionId: string | null = null
    device.on('message', (m) => {
      if (m.type === 'welcome') sessionId = m.sessionId
    })
    await waitFor(() => device!.state === 'streaming', 10_000)
    expect(sessionId).toBe(s.sessionId)
  }, 20_000)

  test('follows the cues of a calibration run: one decision per trial, labels as the server stored them', async () => {
    let completed = false
    device!.on('message', (m) => {
      if (m.type === 'run' && m.state === 'completed') completed = true
    })
    const res = (await runsRoute.action({ request: request(`/live/${s.sessionId}/runs`, { cookie, form: { intent: 'start', kind: 'calibration' } }), context: h.t.context, params: { sessionId: s.sessionId } } as never)) as Response
    expect(res.status).toBe(200)
    const runId = ((await res.json()) as { run: { id: string } }).run.id
    await waitFor(() => completed, 40_000)
    const stored = await h.t.handle.db.select().from(trials).where(eq(trials.runId, runId))
    const planted = device!.truth().trials
    expect(planted).toHaveLength(6)
    expect(planted.map((t) => t.cued).sort()).toEqual(stored.map((t) => t.label).sort())
    expect(device!.stats.cuesReceived).toBeGreaterThanOrEqual(6 * 3)
    // The recorded run is acknowledged as durable.
    await waitFor(() => device!.stats.lastAck !== null, 10_000)
  }, 60_000)

  test('NaN samples: the server closes the link with its code, the device logs it and reconnects', async () => {
    const reconnectsBefore = device!.stats.reconnects
    device!.inject('nan')
    await waitFor(() => device!.stats.reconnects > reconnectsBefore && device!.state === 'streaming', 15_000)
    const log = device!.faultLog()
    expect(log.some((e) => e.kind === 'nan')).toBe(true)
    expect(log.some((e) => e.kind === 'server-close' && e.detail.includes(String(CloseCode.nonFiniteSamples)))).toBe(true)
  }, 20_000)
})
