// The bad-input suite for the ingest: 40+ distinct protocol violations, each sent on its own
// device link to the real WebSocket ingest (app/live) over loopback while another session
// decodes a feedback run normally. Each must close with its documented code (the CloseCode
// table of app/ingest/protocol.ts; 4000-4999 are the application range of RFC 6455 §7.4.2, 1009
// is RFC 6455's "message too big") and be recorded — as a session event when the token names
// a session, otherwise in the audit log. The decoding session's link must stay up, every one
// of its decisions must be logged, its latency must not move, and the heap must come back.
import { runInNewContext } from 'node:vm'
import { setFlagsFromString } from 'node:v8'
import { and, eq, sql } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { auditEvents, decisions, deviceTokens, sessionEvents, sessions } from '~/db/schema'
import { BLOCK_HEADER_BYTES, BLOCK_MAGIC, CloseCode, MAX_BLOCK_SAMPLES, MAX_FRAME_BYTES, MAX_TEXT_FRAME_BYTES, encodeBlock } from '~/ingest/protocol'
import { createSecondLab } from '../support/labs'
import { createDeviceToken } from '~/live/tokens.server'
import { BLOCK, RATE_HZ, block, connect, pacedStream, startLiveHarness, type DeviceLink, type LiveHarness } from '../support/live-harness'

setFlagsFromString('--expose-gc')
const gc = runInNewContext('gc') as () => void

const PORT = 4620
const HARD_MAX = 2 * 1024 * 1024
let h: LiveHarness
let good: { sessionId: string; token: string }
let goodLink: DeviceLink
let goodStream: ReturnType<typeof pacedStream>
let victim: { sessionId: string; token: string; tokenId: string }

beforeAll(async () => {
  h = await startLiveHarness(PORT, {
    helloTimeoutMs: 600,
    idleTimeoutMs: 2_000,
    slowWindowMs: 2_500,
    maxFramesPerSecond: 300,
    frameBurst: 600,
    maxAheadSeconds: 5,
    hardMaxPayloadBytes: HARD_MAX,
    staleLinkMs: 3_000,
  })
  good = await h.newSession()
  victim = await h.newSession()
}, 60_000)

afterAll(async () => {
  goodStream?.stop()
  await h?.close()
})

type Where = 'victim' | 'audit' | 'other'
interface Violation {
  name: string
  /** Expected close code; null when the link must stay open (the fault is only recorded). */
  code: number | null
  /** Where the refusal is recorded. */
  where: Where
  /** The event kind recorded (protocol_violation for closes). */
  event?: string
  run(): Promise<{ code: number; reason: string } | 'open'>
}

const C = 16
const closeOf = (link: DeviceLink, timeoutMs = 8_000) =>
  Promise.race([link.closed, new Promise<{ code: number; reason: string }>((r) => setTimeout(() => r({ code: -1, reason: 'still open after timeout' }), timeoutMs))])

/** A link to the victim session past the welcome, ready to misbehave. */
async function streaming(fields: Record<string, unknown> = {}): Promise<DeviceLink> {
  const link = await connect(h.url)
  link.hello({ token: victim.token, channels: h.channels, ...fields })
  await link.welcome()
  return link
}

async function helloOnly(fields: Record<string, unknown>): Promise<{ code: number; reason: string }> {
  const link = await connect(h.url)
  link.hello({ channels: h.channels, ...fields })
  return closeOf(link)
}

async function rawFirst(send: (link: DeviceLink) => void): Promise<{ code: number; reason: string }> {
  const link = await connect(h.url)
  send(link)
  return closeOf(link)
}

async function afterWelcome(send: (link: DeviceLink) => void | Promise<void>, fields: Record<string, unknown> = {}): Promise<{ code: number; reason: string }> {
  const link = await streaming(fields)
  await send(link)
  return closeOf(link)
}

/** Sends the frames, checks the link is still up, then says bye. */
async function staysOpen(frames: Uint8Array[]): Promise<'open' | { code: number; reason: string }> {
  const link = await streaming()
  for (const f of frames) link.ws.send(f)
  await new Promise((r) => setTimeout(r, 250))
  if (!link.isOpen()) return closeOf(link)
  link.ws.send(JSON.stringify({ type: 'bye' }))
  await closeOf(link)
  return 'open'
}

function header(seq: number, firstSample: number, channels: number, samples: number, extraBytes = 0): Uint8Array {
  const out = new Uint8Array(BLOCK_HEADER_BYTES + extraBytes)
  const v = new DataView(out.buffer)
  v.setUint32(0, BLOCK_MAGIC, true)
  v.setUint32(4, seq, true)
  v.setFloat64(8, firstSample, true)
  v.setUint16(16, channels, true)
  v.setUint16(18, samples, true)
  return out
}

const violations: Violation[] = [
  // --- authentication -----------------------------------------------------------------------
  { name: 'hello without a token', code: CloseCode.unauthorized, where: 'audit', run: () => helloOnly({}) },
  { name: 'malformed token (too short)', code: CloseCode.unauthorized, where: 'audit', run: () => helloOnly({ token: 'abc' }) },
  { name: 'unknown token', code: CloseCode.unauthorized, where: 'audit', run: () => helloOnly({ token: 'tdev_' + 'x'.repeat(40) }) },
  { name: 'token of another session (hello names the decoding session)', code: CloseCode.unauthorized, where: 'victim', run: () => helloOnly({ token: victim.token, sessionId: good.sessionId }) },
  {
    name: 'token of another lab',
    code: CloseCode.unauthorized,
    where: 'other',
    run: async () => {
      const lab = await createSecondLab(h.t.services.db)
      const other = await createDeviceToken(h.t.services.db, { labId: lab.labId, sessionId: lab.sessionId, createdBy: null, hours: 1 })
      otherLabSessionId = lab.sessionId
      return helloOnly({ token: other.token, sessionId: victim.sessionId })
    },
  },
  {
    name: 'expired token',
    code: CloseCode.tokenExpired,
    where: 'victim',
    run: async () => {
      const t = await createDeviceToken(h.t.services.db, { labId: h.t.labId, sessionId: victim.sessionId, createdBy: null, hours: 1 })
      await h.t.services.db.update(deviceTokens).set({ expiresAt: new Date(Date.now() - 60_000) }).where(eq(deviceTokens.id, t.id))
      return helloOnly({ token: t.token })
    },
  },
  {
    name: 'revoked token',
    code: CloseCode.tokenRevoked,
    where: 'victim',
    run: async () => {
      const t = await createDeviceToken(h.t.services.db, { labId: h.t.labId, sessionId: victim.sessionId, createdBy: null, hours: 1 })
      await h.t.services.db.update(deviceTokens).set({ revokedAt: new Date() }).where(eq(deviceTokens.id, t.id))
      return helloOnly({ token: t.token })
    },
  },
  {
    name: 'session already ended',
    code: CloseCode.sessionClosed,
    where: 'other',
    run: async () => {
      const ended = await h.newSession({ decoder: false })
      await h.t.services.db.update(sessions).set({ status: 'ended', endedAt: new Date() }).where(eq(sessions.id, ended.sessionId))
      endedSessionId = ended.sessionId
      return helloOnly({ token: ended.token })
    },
  },
  // --- the hello ----------------------------------------------------------------------------
  { name: 'no hello at all (silence)', code: CloseCode.helloRequired, where: 'audit', run: () => rawFirst(() => undefined) },
  { name: 'sample block before the hello', code: CloseCode.helloRequired, where: 'audit', run: () => rawFirst((l) => l.ws.send(block(0, 0, C))) },
  { name: 'first message is a marker, not a hello', code: CloseCode.helloRequired, where: 'audit', run: () => rawFirst((l) => l.ws.send(JSON.stringify({ type: 'marker', sample: 0, label: 'x' }))) },
  { name: 'hello is not JSON', code: CloseCode.badHello, where: 'audit', run: () => rawFirst((l) => l.ws.send('{"type":"hello",')) },
  { name: 'hello without channels', code: CloseCode.badHello, where: 'audit', run: () => helloOnly({ token: victim.token, channels: undefined }) },
  { name: 'hello in millivolts', code: CloseCode.badHello, where: 'audit', run: () => helloOnly({ token: victim.token, units: 'mV' }) },
  { name: 'hello with a negative rate', code: CloseCode.badHello, where: 'audit', run: () => helloOnly({ token: victim.token, rateHz: -500 }) },
  { name: 'protocol version 2', code: CloseCode.badVersion, where: 'audit', run: () => helloOnly({ token: victim.token, protocol: 2 }) },
  { name: 'channel names not those of the montage', code: CloseCode.montageMismatch, where: 'victim', run: () => helloOnly({ token: victim.token, channels: h.channels.map((c, i) => (i === 3 ? 'Xx9' : c)) }) },
  { name: 'channels in another order', code: CloseCode.montageMismatch, where: 'victim', run: () => helloOnly({ token: victim.token, channels: [...h.channels].reverse() }) },
  { name: 'channel count not that of the montage', code: CloseCode.montageMismatch, where: 'victim', run: () => helloOnly({ token: victim.token, channels: h.channels.slice(0, 8) }) },
  { name: 'rate not the session rate', code: CloseCode.montageMismatch, where: 'victim', run: () => helloOnly({ token: victim.token, rateHz: 250 }) },
  // --- binary frames ------------------------------------------------------------------------
  { name: 'truncated frame (shorter than the header)', code: CloseCode.badFrame, where: 'victim', run: () => afterWelcome((l) => l.ws.send(new Uint8Array(10))) },
  { name: 'wrong magic', code: CloseCode.badFrame, where: 'victim', run: () => afterWelcome((l) => l.ws.send(new Uint8Array(BLOCK_HEADER_BYTES + C * 4 * BLOCK))) },
  { name: 'body shorter than the header says', code: CloseCode.badFrame, where: 'victim', run: () => afterWelcome((l) => l.ws.send(block(0, 0, C).slice(0, -4))) },
  { name: 'body longer than the header says', code: CloseCode.badFrame, where: 'victim', run: () => afterWelcome((l) => l.ws.send(Buffer.concat([block(0, 0, C), new Uint8Array(8)]))) },
  { name: 'fractional first-sample index', code: CloseCode.badFrame, where: 'victim', run: () => afterWelcome((l) => l.ws.send(header(0, 0.5, C, 1, C * 4))) },
  { name: 'frame above the size limit', code: CloseCode.frameTooLarge, where: 'victim', run: () => afterWelcome((l) => l.ws.send(header(0, 0, C, 1, MAX_FRAME_BYTES))) },
  { name: 'frame above the transport limit', code: 1009, where: 'victim', run: () => afterWelcome((l) => l.ws.send(new Uint8Array(HARD_MAX + 1024))) },
  { name: 'block channel count differs from the hello', code: CloseCode.wrongChannelCount, where: 'victim', run: () => afterWelcome((l) => l.ws.send(block(0, 0, C + 1))) },
  { name: 'zero samples', code: CloseCode.wrongSampleCount, where: 'victim', run: () => afterWelcome((l) => l.ws.send(header(0, 0, C, 0))) },
  { name: 'more samples than allowed', code: CloseCode.wrongSampleCount, where: 'victim', run: () => afterWelcome((l) => l.ws.send(header(0, 0, C, MAX_BLOCK_SAMPLES + 1, C * 4 * (MAX_BLOCK_SAMPLES + 1)))) },
  { name: 'NaN sample', code: CloseCode.nonFiniteSamples, where: 'victim', run: () => afterWelcome((l) => l.ws.send(block(0, 0, C, BLOCK, (s, c) => (s === 7 && c === 3 ? Number.NaN : 10)))) },
  { name: 'infinite sample', code: CloseCode.nonFiniteSamples, where: 'victim', run: () => afterWelcome((l) => l.ws.send(block(0, 0, C, BLOCK, (s) => (s === 2 ? -Infinity : 10)))) },
  { name: 'absurd amplitude (volts sent as microvolts)', code: CloseCode.absurdAmplitude, where: 'victim', run: () => afterWelcome((l) => l.ws.send(block(0, 0, C, BLOCK, () => 2e6))) },
  {
    name: 'time going backwards',
    code: CloseCode.timeBackwards,
    where: 'victim',
    run: () =>
      afterWelcome((l) => {
        l.ws.send(block(0, 0, C))
        l.ws.send(block(1, BLOCK, C))
        l.ws.send(block(2, 0, C))
      }),
  },
  // --- recorded but tolerated ---------------------------------------------------------------
  { name: 'sequence gap', code: null, where: 'victim', event: 'sequence_gap', run: () => staysOpen([block(0, 0, C), block(3, 3 * BLOCK, C)]) },
  { name: 'duplicate block', code: null, where: 'victim', event: 'duplicate_block', run: () => staysOpen([block(0, 0, C), block(1, BLOCK, C), block(1, BLOCK, C)]) },
  { name: 'reordered blocks', code: null, where: 'victim', event: 'reordered_block', run: () => staysOpen([block(0, 0, C), block(2, 2 * BLOCK, C), block(1, BLOCK, C)]) },
  // --- rates --------------------------------------------------------------------------------
  {
    name: 'flood of tiny frames',
    code: CloseCode.rateLimited,
    where: 'victim',
    run: () =>
      afterWelcome((l) => {
        for (let i = 0; i < 1_000 && l.isOpen(); i++) l.ws.send(block(i, i, C, 1))
      }),
  },
  {
    name: 'samples far faster than the declared rate',
    code: CloseCode.rateLimited,
    where: 'victim',
    run: () =>
      afterWelcome((l) => {
        // 20 s of samples in one go; the limit is 5 s ahead of the wall clock.
        for (let i = 0; i < 20; i++) l.ws.send(block(i, i * RATE_HZ, C, RATE_HZ))
      }),
  },
  {
    name: 'slow sender (a quarter of the declared rate)',
    code: CloseCode.tooSlow,
    where: 'victim',
    run: async () => {
      const link = await streaming()
      const stream = pacedStream(link, C, 0, RATE_HZ / 4)
      const result = await closeOf(link, 10_000)
      stream.stop()
      return result
    },
  },
  { name: 'idle after the welcome', code: CloseCode.tooSlow, where: 'victim', run: () => afterWelcome((l) => l.ws.send(block(0, 0, C))) },
  // --- text messages after the hello --------------------------------------------------------
  { name: 'second hello on a link', code: CloseCode.badMessage, where: 'victim', run: () => afterWelcome((l) => l.hello({ token: victim.token, channels: h.channels })) },
  { name: 'text frame that is not JSON', code: CloseCode.badMessage, where: 'victim', run: () => afterWelcome((l) => l.ws.send('not json at all')) },
  { name: 'unknown message type', code: CloseCode.badMessage, where: 'victim', run: () => afterWelcome((l) => l.ws.send(JSON.stringify({ type: 'reboot' }))) },
  { name: 'marker at a negative sample', code: CloseCode.badMessage, where: 'victim', run: () => afterWelcome((l) => l.ws.send(JSON.stringify({ type: 'marker', sample: -5, label: 'x' }))) },
  { name: 'text frame above its limit', code: CloseCode.frameTooLarge, where: 'victim', run: () => afterWelcome((l) => l.ws.send(JSON.stringify({ type: 'marker', sample: 1, label: 'x'.repeat(MAX_TEXT_FRAME_BYTES) }))) },
  // --- links ----------------------------------------------------------------------------------
  {
    name: 'second device link for the same session',
    code: CloseCode.alreadyConnected,
    where: 'victim',
    run: async () => {
      const first = await streaming()
      const stream = pacedStream(first, C)
      await new Promise((r) => setTimeout(r, 300))
      const second = await connect(h.url)
      second.hello({ token: victim.token, channels: h.channels })
      const result = await closeOf(second)
      stream.stop()
      first.ws.send(JSON.stringify({ type: 'bye' }))
      await closeOf(first)
      return result
    },
  },
]

let otherLabSessionId = ''
let endedSessionId = ''

function percentile(values: number[], p: number): number {
  if (values.length === 0) return Number.NaN
  const sorted = [...values].sort((a, b) => a - b)
  return sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))]
}

describe('ingest under bad input', () => {
  const results = new Map<string, { code: number; reason: string } | 'open'>()
  const phases = { baselineStart: 0, violationsStart: 0, violationsEnd: 0 }
  let heapBefore = 0
  let heapAfter = 0
  let rssBefore = 0
  let rssAfter = 0

  it('has at least 30 distinct violations', () => {
    expect(new Set(violations.map((v) => v.name)).size).toBe(violations.length)
    expect(violations.length).toBeGreaterThanOrEqual(30)
  })

  it('sends every violation while another session decodes', async () => {
    goodLink = await connect(h.url)
    goodLink.hello({ token: good.token, channels: h.channels })
    await goodLink.welcome()
    goodStream = pacedStream(goodLink, C)
    // The victim session learns its rate from a first, clean link.
    const warm = await streaming()
    warm.ws.send(block(0, 0, C))
    warm.ws.send(JSON.stringify({ type: 'bye' }))
    await closeOf(warm)
    await h.live.startRun(good.sessionId, { kind: 'feedback' }, null)
    await new Promise((r) => setTimeout(r, 2_000)) // warm-up: pipeline and JIT
    gc()
    heapBefore = process.memoryUsage().heapUsed
    rssBefore = process.memoryUsage().rss
    phases.baselineStart = Date.now()
    await new Promise((r) => setTimeout(r, 3_000))
    phases.violationsStart = Date.now()
    for (const v of violations) results.set(v.name, await v.run())
    phases.violationsEnd = Date.now()
    expect(goodLink.isOpen(), 'the decoding session kept its link').toBe(true)
  }, 120_000)

  it('closes each with its documented code', () => {
    const wrong = violations
      .map((v) => ({ v, got: results.get(v.name) }))
      .filter(({ v, got }) => (v.code === null ? got !== 'open' : got === 'open' || got?.code !== v.code))
      .map(({ v, got }) => `${v.name}: expected ${v.code ?? 'open'}, got ${JSON.stringify(got)}`)
    expect(wrong, wrong.join('\n')).toEqual([])
    // Every close carries a reason saying what was wrong (1009 comes from the WebSocket layer
    // itself, before any of our code sees the frame; the session event still records it).
    for (const [name, got] of results) if (got !== 'open' && got.code !== 1009) expect(got.reason.length, name).toBeGreaterThan(5)
  })

  it('records each refusal: a session event when the session is known, the audit log otherwise', async () => {
    await h.live.flush()
    await new Promise((r) => setTimeout(r, 300))
    await h.live.flush()
    const db = h.t.services.db
    const victimEvents = await db.select().from(sessionEvents).where(eq(sessionEvents.sessionId, victim.sessionId))
    const violationCodes = victimEvents.filter((e) => e.kind === 'protocol_violation').map((e) => Number((e.detail as { code?: number }).code))
    const expectCount = (list: number[], code: number) => list.filter((c) => c === code).length
    for (const code of new Set(violations.filter((v) => v.where === 'victim' && v.code !== null).map((v) => v.code!))) {
      const want = violations.filter((v) => v.where === 'victim' && v.code === code).length
      expect(expectCount(violationCodes, code), `victim session events with code ${code}`).toBeGreaterThanOrEqual(want)
    }
    for (const v of violations.filter((x) => x.event)) expect(victimEvents.some((e) => e.kind === v.event), v.event).toBe(true)

    const audits = await db.select().from(auditEvents).where(eq(auditEvents.action, 'ingest.refused'))
    const auditCodes = audits.map((a) => Number((a.detail as { code?: number }).code))
    for (const v of violations.filter((x) => x.where === 'audit')) expect(auditCodes, v.name).toContain(v.code)

    // The token's own sessions (another lab's, an ended one) carry their refusals.
    for (const [sessionId, code] of [
      [otherLabSessionId, CloseCode.unauthorized],
      [endedSessionId, CloseCode.sessionClosed],
    ] as const) {
      const rows = await db
        .select()
        .from(sessionEvents)
        .where(and(eq(sessionEvents.sessionId, sessionId), eq(sessionEvents.kind, 'protocol_violation')))
      expect(rows.map((r) => Number((r.detail as { code?: number }).code)), sessionId).toContain(code)
    }
    // Nothing was recorded against the decoding session.
    const goodViolations = await db
      .select({ n: sql<number>`count(*)::int` })
      .from(sessionEvents)
      .where(and(eq(sessionEvents.sessionId, good.sessionId), eq(sessionEvents.kind, 'protocol_violation')))
    expect(goodViolations[0].n).toBe(0)
  })

  it("leaves the decoding session's decisions, log and latency unaffected", async () => {
    await new Promise((r) => setTimeout(r, 1_000))
    goodStream.stop()
    await h.live.stopRun(good.sessionId, null)
    await h.live.flush()
    const db = h.t.services.db
    const rows = await db
      .select({ at: decisions.receivedAt, latencyUs: decisions.latencyUs })
      .from(decisions)
      .where(eq(decisions.sessionId, good.sessionId))
    const made = (await h.live.getSession(good.sessionId)).counts.decisionsMade
    expect(rows.length, 'decisions logged = decisions made').toBe(made)
    const inPhase = (from: number, to: number) => rows.filter((r) => r.at.getTime() >= from && r.at.getTime() < to).map((r) => r.latencyUs / 1000)
    const baseline = inPhase(phases.baselineStart, phases.violationsStart)
    const during = inPhase(phases.violationsStart, phases.violationsEnd)
    const rate = (n: number, ms: number) => n / (ms / 1000)
    const baselineRate = rate(baseline.length, phases.violationsStart - phases.baselineStart)
    const duringRate = rate(during.length, phases.violationsEnd - phases.violationsStart)
    const figures = {
      violations: violations.length,
      refused: [...results.values()].filter((r) => r !== 'open').length,
      decisionsMade: made,
      decisionsLogged: rows.length,
      baselineP50Ms: percentile(baseline, 50),
      baselineP99Ms: percentile(baseline, 99),
      duringP50Ms: percentile(during, 50),
      duringP99Ms: percentile(during, 99),
      baselineDecisionsPerS: baselineRate,
      duringDecisionsPerS: duringRate,
    }
    console.log('ingest-violations figures', JSON.stringify(figures))
    expect(baseline.length).toBeGreaterThan(10)
    expect(duringRate).toBeGreaterThan(baselineRate * 0.85)
    // Bound set for a shared 2-core machine: the bad links may not add more than a scheduling blip.
    expect(figures.duringP99Ms).toBeLessThanOrEqual(figures.baselineP99Ms * 2 + 20)
  })

  it('gives the memory back: no link, buffer or listener left behind', async () => {
    goodLink.ws.send(JSON.stringify({ type: 'bye' }))
    await closeOf(goodLink)
    await new Promise((r) => setTimeout(r, 2_500)) // refused peers are cut off after 2 s at most
    expect(h.live.stats().links).toBe(0)
    for (let i = 0; i < 3; i++) gc()
    heapAfter = process.memoryUsage().heapUsed
    rssAfter = process.memoryUsage().rss
    console.log('ingest-violations memory', JSON.stringify({ heapMbBefore: heapBefore / 2 ** 20, heapMbAfter: heapAfter / 2 ** 20, rssMbBefore: rssBefore / 2 ** 20, rssMbAfter: rssAfter / 2 ** 20 }))
    expect(heapAfter - heapBefore).toBeLessThan(24 * 2 ** 20)
  })
})
