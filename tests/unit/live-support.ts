// Test harness for the live path: a real HTTP server with the WebSocket ingest on a loopback
// port, live services on an in-memory database with the demo lab, and a device client that
// speaks app/ingest/protocol.ts. Used by tests/unit/live-*.test.ts and scripts/bench-live.ts.
import { createServer, type Server } from 'node:http'
import { eq } from 'drizzle-orm'
import WebSocket from 'ws'
import { montages, participants, protocols, sessions, users } from '~/db/schema'
import { encodeBlock, type ServerMessage } from '~/ingest/protocol'
import { createLiveServices, type LiveServicesImpl } from '~/live/index.server'
import type { LiveLimits } from '~/live/limits'
import { createDeviceToken } from '~/live/tokens.server'
import type { SessionUser } from '~/server/services'
import { createTestServices, type TestServices } from '../support/services'

export interface LiveHarness {
  t: TestServices
  live: LiveServicesImpl
  port: number
  ingestUrl: string
  operator: SessionUser
  /** A new planned session on the demo participant with a montage of `channels` channels (16, 21 or 64). */
  createSession(options?: { channels?: 16 | 21 | 64; trialsPerClass?: number; timing?: Partial<typeof protocols.$inferInsert> }): Promise<{ sessionId: string; channels: string[]; token: string }>
  newToken(sessionId: string, hours?: number): Promise<{ id: string; token: string }>
  close(): Promise<void>
}

export const quietLog = () => undefined

export async function startLiveHarness(port: number, limits: Partial<LiveLimits> = {}, existing?: TestServices): Promise<LiveHarness> {
  const t = existing ?? (await createTestServices())
  const db = t.handle.db
  const live = await createLiveServices({ db, config: t.services.config, limits: { workers: 2, ...limits }, log: quietLog })
  t.services.live = live
  const server: Server = createServer((_req, res) => {
    res.statusCode = 404
    res.end()
  })
  server.on('upgrade', (req, socket, head) => {
    if ((req.url ?? '').split('?')[0] === '/ingest') live.handleUpgrade(req, socket, head)
    else socket.destroy()
  })
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject)
    server.listen(port, '127.0.0.1', () => resolve())
  })
  const [operatorRow] = await db.select().from(users).where(eq(users.role, 'operator'))
  const operator: SessionUser = { id: operatorRow.id, labId: operatorRow.labId, role: 'operator', email: operatorRow.email, name: operatorRow.name, participantId: null }
  const [participant] = await db.select().from(participants).where(eq(participants.labId, t.labId))

  return {
    t,
    live,
    port,
    ingestUrl: `ws://127.0.0.1:${port}/ingest`,
    operator,
    async createSession(options = {}) {
      const count = options.channels ?? 16
      const all = await db.select().from(montages).where(eq(montages.labId, t.labId))
      const montage = all.find((m) => m.channels.length === count)!
      const [protocol] = await db
        .insert(protocols)
        .values({
          labId: t.labId,
          name: `test protocol ${Math.random().toString(36).slice(2)}`,
          classes: ['left', 'right'],
          trialsPerClass: options.trialsPerClass ?? 2,
          fixationSeconds: 0.2,
          cueSeconds: 0.2,
          imagerySeconds: 0.6,
          restSeconds: 0.2,
          restJitterSeconds: 0.1,
          windowStartSeconds: 0.2,
          windowEndSeconds: 0.8,
          decodingWindowSeconds: 0.5,
          ...options.timing,
        })
        .returning()
      const [session] = await db
        .insert(sessions)
        .values({ labId: t.labId, participantId: participant.id, protocolId: protocol.id, montageId: montage.id, operatorId: operator.id })
        .returning()
      const { token } = await createDeviceToken(db, { labId: t.labId, sessionId: session.id, createdBy: operator.id, hours: 2 })
      return { sessionId: session.id, channels: montage.channels.map((c) => c.name), token }
    },
    async newToken(sessionId, hours = 2) {
      const created = await createDeviceToken(db, { labId: t.labId, sessionId, createdBy: operator.id, hours })
      return { id: created.id, token: created.token }
    },
    async close() {
      await live.close()
      await new Promise<void>((r) => server.close(() => r()))
      if (!existing) await t.close()
    },
  }
}

export interface Closed {
  code: number
  reason: string
}

/** A device link client: connects, says hello, sends blocks, records what the server sends. */
export class TestDevice {
  readonly ws: WebSocket
  readonly messages: ServerMessage[] = []
  readonly acks: Extract<ServerMessage, { type: 'ack' }>[] = []
  readonly opened: Promise<void>
  readonly closed: Promise<Closed>
  seq = 0
  sample = 0
  /** The cue in force as the server announced it (cue and imagery phases), for simulated imagery. */
  cue: string | null = null
  private noise = 12345
  private waiters: { match: (m: ServerMessage) => boolean; resolve: (m: ServerMessage) => void }[] = []

  constructor(url: string) {
    this.ws = new WebSocket(url)
    this.opened = new Promise((resolve, reject) => {
      this.ws.once('open', () => resolve())
      this.ws.once('error', reject)
    })
    this.closed = new Promise((resolve) => this.ws.once('close', (code, reason) => resolve({ code, reason: reason.toString() })))
    this.ws.on('error', () => undefined)
    this.ws.on('message', (data, isBinary) => {
      if (isBinary) return
      const message = JSON.parse(data.toString()) as ServerMessage
      if (message.type === 'cue') this.cue = message.phase === 'cue' || message.phase === 'imagery' ? message.label : null
      if (message.type !== 'ack') this.messages.push(message)
      else this.acks.push(message)
      this.waiters = this.waiters.filter((w) => {
        if (!w.match(message)) return true
        w.resolve(message)
        return false
      })
    })
  }

  static async connect(url: string): Promise<TestDevice> {
    const device = new TestDevice(url)
    await device.opened
    return device
  }

  sendJson(value: unknown): void {
    this.ws.send(JSON.stringify(value))
  }

  hello(token: string, channels: string[], rateHz = 500, extra: Record<string, unknown> = {}): void {
    this.sendJson({ type: 'hello', protocol: 1, token, device: 'test device', channels, rateHz, units: 'uV', ...extra })
  }

  /** Says hello and waits for the welcome; the sample clock continues from the server's nextSample. */
  async start(token: string, channels: string[], rateHz = 500, extra: Record<string, unknown> = {}): Promise<Extract<ServerMessage, { type: 'welcome' }>> {
    const welcome = this.next((m) => m.type === 'welcome')
    this.hello(token, channels, rateHz, extra)
    const w = (await Promise.race([welcome, this.closed.then((c) => Promise.reject(new Error(`closed ${c.code} ${c.reason}`)))])) as Extract<ServerMessage, { type: 'welcome' }>
    this.sample = w.nextSample
    return w
  }

  /**
   * Sends one block: a 10 Hz, 20 µV rhythm on every channel plus noise. While a cue is in force
   * the rhythm drops to 30 % on the half of the channels "opposite" the cued class (a crude
   * stand-in for event-related desynchronisation, enough for a decoder to find).
   */
  block(channelCount: number, sampleCount = 16, rateHz = 500, override: { seq?: number; firstSample?: number; value?: number } = {}): void {
    const samples = new Float32Array(channelCount * sampleCount)
    const first = override.firstSample ?? this.sample
    const half = channelCount >> 1
    for (let s = 0; s < sampleCount; s++) {
      const rhythm = 20 * Math.sin((2 * Math.PI * 10 * (first + s)) / rateHz)
      for (let c = 0; c < channelCount; c++) {
        let gain = 1
        if (this.cue === 'left' && c >= half) gain = 0.3
        if (this.cue === 'right' && c < half) gain = 0.3
        this.noise = (this.noise * 1103515245 + 12345) >>> 0
        const noise = ((this.noise / 4294967296) - 0.5) * 6
        samples[s * channelCount + c] = override.value ?? rhythm * gain * (1 + (c % 3) * 0.1) + noise
      }
    }
    this.ws.send(encodeBlock({ seq: override.seq ?? this.seq, firstSample: first, channelCount, samples }))
    if (override.seq === undefined) this.seq++
    if (override.firstSample === undefined) this.sample += sampleCount
  }

  next(match: (m: ServerMessage) => boolean, timeoutMs = 10_000): Promise<ServerMessage> {
    const found = this.messages.find(match)
    if (found) return Promise.resolve(found)
    return new Promise((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error('timed out waiting for a server message')), timeoutMs)
      this.waiters.push({
        match,
        resolve: (m) => {
          clearTimeout(timer)
          resolve(m)
        },
      })
    })
  }

  close(): void {
    this.ws.close(1000, 'done')
  }
}

/** Streams blocks in real time (one every sampleCount/rateHz seconds) until stopped. */
export function streamRealTime(device: TestDevice, channelCount: number, rateHz = 500, sampleCount = 16): { stop(): void } {
  const started = performance.now()
  let sent = 0
  const timer = setInterval(() => {
    if (device.ws.readyState !== WebSocket.OPEN) return
    const due = Math.floor(((performance.now() - started) / 1000) * rateHz / sampleCount)
    while (sent < due) {
      device.block(channelCount, sampleCount, rateHz)
      sent++
    }
  }, 4)
  return { stop: () => clearInterval(timer) }
}

/** Reads an SSE Response into events until `until` returns true or the time runs out. */
export async function readEvents(
  response: Response,
  until: (events: { event: string; id: string | null; data: unknown }[]) => boolean,
  timeoutMs = 10_000,
): Promise<{ event: string; id: string | null; data: unknown }[]> {
  const reader = response.body!.getReader()
  const decoder = new TextDecoder()
  const events: { event: string; id: string | null; data: unknown }[] = []
  let buffer = ''
  const deadline = Date.now() + timeoutMs
  try {
    while (!until(events) && Date.now() < deadline) {
      const chunk = await Promise.race([reader.read(), new Promise<null>((r) => setTimeout(() => r(null), Math.max(1, deadline - Date.now())))])
      if (chunk === null || chunk.done) break
      buffer += decoder.decode(chunk.value, { stream: true })
      let end: number
      while ((end = buffer.indexOf('\n\n')) >= 0) {
        const frame = buffer.slice(0, end)
        buffer = buffer.slice(end + 2)
        let event = 'message'
        let id: string | null = null
        let data = ''
        for (const line of frame.split('\n')) {
          if (line.startsWith('event: ')) event = line.slice(7)
          else if (line.startsWith('id: ')) id = line.slice(4)
          else if (line.startsWith('data: ')) data += line.slice(6)
        }
        if (data) events.push({ event, id, data: JSON.parse(data) })
      }
    }
  } finally {
    await reader.cancel().catch(() => undefined)
  }
  return events
}

export function sleep(ms: number): Promise<void> {
  return new Promise((r) => setTimeout(r, ms))
}
