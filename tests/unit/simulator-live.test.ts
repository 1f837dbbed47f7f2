// Live mode against a small ingest server written here from app/ingest/protocol.ts (hello
// schema, decodeBlock, close codes), so the device is checked against the wire format itself.
import { afterEach, describe, expect, it } from 'vitest'
import { WebSocketServer, type WebSocket } from 'ws'
import { CloseCode, FrameError, closeReason, decodeBlock, helloSchema, type Hello, type SampleBlock, type ServerMessage } from '../../app/ingest/protocol'
import { sensorimotorChannels } from '../../simulator/channels'
import { NO_ARTIFACTS } from '../../simulator/generator'
import { startLiveDevice, type LiveDevice } from '../../simulator/live-device'

const TOKEN = 'tdev_test_token_123'
let nextPort = 4110

interface Link {
  hello: Hello
  blocks: SampleBlock[]
  socket: WebSocket
  closed?: { code: number; reason: string }
}

/** Accepts device links, records blocks, closes with the protocol's codes on bad frames. */
function startIngest(opts: { nextSample?: (links: Link[]) => number; rejectToken?: boolean } = {}) {
  const port = nextPort++
  const server = new WebSocketServer({ host: '127.0.0.1', port, path: '/ingest' })
  const links: Link[] = []
  server.on('connection', (socket) => {
    let link: Link | null = null
    socket.on('message', (data, isBinary) => {
      const bytes = data instanceof Buffer ? new Uint8Array(data.buffer, data.byteOffset, data.byteLength) : new Uint8Array(data as ArrayBuffer)
      if (!link) {
        if (isBinary) return socket.close(CloseCode.helloRequired, 'hello first')
        const parsed = helloSchema.safeParse(JSON.parse(Buffer.from(bytes).toString()))
        if (!parsed.success) return socket.close(CloseCode.badHello, 'bad hello')
        if (opts.rejectToken) return socket.close(CloseCode.unauthorized, 'unknown token')
        link = { hello: parsed.data, blocks: [], socket }
        links.push(link)
        const welcome: ServerMessage = { type: 'welcome', protocol: 1, sessionId: 'session-1', runId: '00000000-0000-4000-8000-000000000001', nextSample: opts.nextSample?.(links) ?? 0 }
        socket.send(JSON.stringify(welcome))
        return
      }
      if (!isBinary) return
      try {
        link.blocks.push(decodeBlock(bytes, link.hello.channels.length))
      } catch (error) {
        if (error instanceof FrameError) socket.close(error.code, closeReason(error.message))
      }
    })
    socket.on('close', (code, reason) => {
      if (link) link.closed = { code, reason: reason.toString() }
    })
  })
  return {
    url: `ws://127.0.0.1:${port}/ingest`,
    links,
    send: (message: ServerMessage) => links.at(-1)?.socket.send(JSON.stringify(message)),
    close: () => new Promise<void>((resolve) => {
      for (const c of server.clients) c.terminate()
      server.close(() => resolve())
    }),
  }
}

const devices: LiveDevice[] = []
const servers: { close(): Promise<void> }[] = []
afterEach(async () => {
  await Promise.all(devices.splice(0).map((d) => d.stop()))
  await Promise.all(servers.splice(0).map((s) => s.close()))
})

const waitFor = async (condition: () => boolean, timeoutMs = 10_000) => {
  const start = Date.now()
  while (!condition()) {
    if (Date.now() - start > timeoutMs) throw new Error('timed out waiting')
    await new Promise((r) => setTimeout(r, 10))
  }
}
const samplesOf = (link: Link) => link.blocks.reduce((n, b) => n + b.sampleCount, 0)

describe('live device link', () => {
  it('says hello with the token, channels and rate, then streams contiguous blocks at the wall-clock rate', async () => {
    const ingest = startIngest()
    servers.push(ingest)
    const device = startLiveDevice({ url: ingest.url, token: TOKEN, channels: sensorimotorChannels(16), rateHz: 250, blockSamples: 10, seed: 1 })
    devices.push(device)
    await waitFor(() => device.state === 'streaming')
    const link = ingest.links[0]
    expect(link.hello).toMatchObject({ type: 'hello', protocol: 1, token: TOKEN, rateHz: 250, units: 'uV' })
    expect(link.hello.channels).toEqual(sensorimotorChannels(16).map((c) => c.name))
    const t0 = Date.now()
    const s0 = samplesOf(link)
    await new Promise((r) => setTimeout(r, 1500))
    const rate = ((samplesOf(link) - s0) * 1000) / (Date.now() - t0)
    // Paced by the wall clock: within one block (40 ms) plus timer slack of 250 Hz.
    expect(rate).toBeGreaterThan(230)
    expect(rate).toBeLessThan(270)
    link.blocks.forEach((b, i) => {
      expect(b.seq).toBe(link.blocks[0].seq + i)
      if (i > 0) expect(b.firstSample).toBe(link.blocks[i - 1].firstSample + link.blocks[i - 1].sampleCount)
    })
    await device.stop()
    await waitFor(() => link.closed !== undefined)
    expect(link.closed!.code).toBe(CloseCode.normal)
    expect(device.state).toBe('stopped')
  })

  it('follows the cues it receives: right-hand imagery lowers mu power at C3', async () => {
    const ingest = startIngest()
    servers.push(ingest)
    const rateHz = 250
    const device = startLiveDevice({
      url: ingest.url, token: TOKEN, channels: sensorimotorChannels(8), rateHz, blockSamples: 25, seed: 3, speed: 25,
      skill: 1, participant: { erdDepth: 0.6, depthSpread: 0 }, artifacts: NO_ARTIFACTS, rhythms: { backgroundUv: 2 },
    })
    devices.push(device)
    await waitFor(() => device.state === 'streaming')
    const link = ingest.links[0]
    const runId = '00000000-0000-4000-8000-000000000001'
    // 12 trials: 4 s imagery then 4 s rest, cue times in the device's own sample numbers.
    const cues: number[] = []
    for (let trial = 0; trial < 12; trial++) {
      await waitFor(() => samplesOf(link) >= (trial * 8 + 1) * rateHz)
      const at = link.blocks.at(-1)!.firstSample + link.blocks.at(-1)!.sampleCount
      cues.push(at)
      ingest.send({ type: 'cue', runId, trial, label: 'right', phase: 'cue', atSample: at })
      ingest.send({ type: 'cue', runId, trial, label: 'right', phase: 'rest', atSample: at + 4 * rateHz })
    }
    await waitFor(() => samplesOf(link) >= (12 * 8 + 1) * rateHz, 20_000)
    await device.stop()
    // C3 power (8–30 Hz dominated by mu here) in imagery (1–4 s) vs rest (5–8 s).
    const c3 = link.hello.channels.indexOf('C3')
    const C = link.hello.channels.length
    const byTime = new Map<number, number>()
    for (const b of link.blocks) for (let s = 0; s < b.sampleCount; s++) byTime.set(b.firstSample + s, b.samples[s * C + c3])
    const power = (from: number, to: number) => {
      let sum = 0
      let n = 0
      for (let t = from; t < to; t++) {
        const v = byTime.get(t)
        if (v !== undefined) {
          sum += v * v
          n++
        }
      }
      return sum / n
    }
    let imagery = 0
    let rest = 0
    for (const at of cues) {
      imagery += power(at + rateHz, at + 4 * rateHz)
      rest += power(at + 5 * rateHz, at + 8 * rateHz)
    }
    expect(device.stats.cuesReceived).toBe(24)
    expect(device.truth().trials).toHaveLength(12)
    expect(1 - imagery / rest).toBeGreaterThan(0.3)
  }, 30_000)

  it('injects drops, duplicates and reordering that the receiver can see in seq and firstSample', async () => {
    const ingest = startIngest()
    servers.push(ingest)
    const device = startLiveDevice({ url: ingest.url, token: TOKEN, channels: ['C3', 'Cz', 'C4'], rateHz: 500, blockSamples: 10, seed: 5, speed: 4 })
    devices.push(device)
    await waitFor(() => device.state === 'streaming')
    const link = ingest.links[0]
    await waitFor(() => link.blocks.length >= 5)
    const logged = (kind: string) => device.faultLog().some((e) => e.kind === kind)
    device.inject('drop')
    device.inject('duplicate')
    device.inject('reorder')
    await waitFor(() => logged('drop') && logged('duplicate') && logged('reorder'))
    const n = link.blocks.length
    await waitFor(() => link.blocks.length >= n + 5)
    await device.stop()
    const seqs = link.blocks.map((b) => b.seq)
    const kinds = device.faultLog().map((e) => e.kind)
    expect(kinds).toEqual(expect.arrayContaining(['drop', 'duplicate', 'reorder']))
    const dropped = device.faultLog().find((e) => e.kind === 'drop')!.seq!
    const duplicated = device.faultLog().find((e) => e.kind === 'duplicate')!.seq!
    const reordered = device.faultLog().find((e) => e.kind === 'reorder')!.seq!
    expect(seqs).not.toContain(dropped)
    expect(seqs.filter((s) => s === duplicated)).toHaveLength(2)
    expect(seqs.indexOf(reordered)).toBe(seqs.indexOf(reordered + 1) + 1)
  })

  it('sends NaN samples and a wrong channel count on request; the server closes and the device reconnects with resumeRunId', async () => {
    const ingest = startIngest({ nextSample: (links) => (links.length > 1 ? samplesOf(links[links.length - 2]) : 0) })
    servers.push(ingest)
    const device = startLiveDevice({ url: ingest.url, token: TOKEN, channels: ['C3', 'Cz', 'C4'], rateHz: 250, blockSamples: 10, seed: 6, speed: 4, faults: { reconnectDelayMs: 50 } })
    devices.push(device)
    await waitFor(() => device.state === 'streaming')
    await waitFor(() => ingest.links[0].blocks.length >= 3)
    device.inject('nan')
    await waitFor(() => ingest.links.length === 2 && device.state === 'streaming')
    expect(ingest.links[0].closed?.code).toBe(CloseCode.nonFiniteSamples)
    expect(ingest.links[1].hello.resumeRunId).toBe('00000000-0000-4000-8000-000000000001')
    await waitFor(() => ingest.links[1].blocks.length >= 3)
    device.inject('wrong-channel-count')
    await waitFor(() => ingest.links.length === 3 && device.state === 'streaming')
    expect(ingest.links[1].closed?.code).toBe(CloseCode.wrongChannelCount)
    const log = device.faultLog()
    expect(log.map((e) => e.kind)).toEqual(expect.arrayContaining(['nan', 'wrong-channel-count', 'server-close']))
    expect(log.find((e) => e.kind === 'server-close')!.detail).toContain(String(CloseCode.nonFiniteSamples))
    expect(device.stats.reconnects).toBe(2)
  })

  it('drops the link on request and, after reconnecting, resends the buffered blocks from nextSample', async () => {
    const ingest = startIngest({ nextSample: (links) => (links.length > 1 ? samplesOf(links[links.length - 2]) : 0) })
    servers.push(ingest)
    const device = startLiveDevice({ url: ingest.url, token: TOKEN, channels: ['C3', 'Cz', 'C4'], rateHz: 250, blockSamples: 10, seed: 7, speed: 4, faults: { reconnectDelayMs: 300 } })
    devices.push(device)
    await waitFor(() => device.state === 'streaming')
    await waitFor(() => ingest.links[0].blocks.length >= 5)
    device.inject('disconnect')
    await waitFor(() => ingest.links.length === 2 && ingest.links[1].blocks.length >= 20)
    await device.stop()
    // Together the two links carry every sample exactly once, without a gap.
    const firsts = [...ingest.links[0].blocks, ...ingest.links[1].blocks].map((b) => b.firstSample)
    for (let i = 1; i < firsts.length; i++) expect(firsts[i]).toBe(firsts[i - 1] + 10)
    expect(device.faultLog().map((e) => e.kind)).toEqual(expect.arrayContaining(['disconnect', 'server-close', 'reconnect']))
  })

  it('stops without reconnecting when the server refuses the token', async () => {
    const ingest = startIngest({ rejectToken: true })
    servers.push(ingest)
    const device = startLiveDevice({ url: ingest.url, token: TOKEN, channels: ['C3', 'C4'], rateHz: 250, seed: 8 })
    devices.push(device)
    await waitFor(() => device.state === 'stopped')
    expect(device.stats.lastClose?.code).toBe(CloseCode.unauthorized)
    expect(device.stats.reconnects).toBe(0)
  })

  it('rejects bad options with a clear message', () => {
    expect(() => startLiveDevice({ url: 'http://x', token: TOKEN, channels: ['C3'] })).toThrow(/ws:\/\//)
    expect(() => startLiveDevice({ url: 'ws://127.0.0.1:1/ingest', token: 'short', channels: ['C3'] })).toThrow(/token/)
    expect(() => startLiveDevice({ url: 'ws://127.0.0.1:1/ingest', token: TOKEN, channels: ['C3'], faults: { dropRate: 2 } })).toThrow(/dropRate/)
  })
})
