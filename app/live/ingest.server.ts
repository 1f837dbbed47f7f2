// The WebSocket ingest at /ingest: one DeviceConnection per device link. It authenticates the
// hello against the device token and the session's montage, checks every frame, and hands
// accepted blocks to the session. Every refusal closes the link with the code documented in
// docs/ingest-protocol.md and is recorded (as a session event when the session is known,
// otherwise in the audit log). One link's faults never touch another session.
import { randomUUID } from 'node:crypto'
import type { IncomingMessage } from 'node:http'
import type { Duplex } from 'node:stream'
import { eq } from 'drizzle-orm'
import { WebSocketServer, type RawData, type WebSocket } from 'ws'
import type { Database } from '../db/client.server.ts'
import { auditEvents, deviceTokens } from '../db/schema.ts'
import {
  CloseCode,
  FrameError,
  MAX_FRAME_BYTES,
  PROTOCOL_VERSION,
  closeReason,
  decodeBlock,
  deviceMessageSchema,
  helloSchema,
  parseJsonFrame,
  type Hello,
  type ServerMessage,
} from '../ingest/protocol.ts'
import type { LiveLimits } from './limits.ts'
import type { LinkHandle, LiveSession } from './live-session.server.ts'
import { RateGuard } from './rate-guard.ts'
import { SequenceTracker } from './sequence-tracker.ts'
import { checkDeviceToken } from './tokens.server.ts'

export interface IngestDeps {
  db: Database
  limits: LiveLimits
  getSession(sessionId: string): Promise<LiveSession | null>
  isClosing(): boolean
  log: (level: 'info' | 'warn' | 'error', event: string, fields: Record<string, unknown>) => void
}

const CODE_NAMES: Record<number, string> = Object.fromEntries(Object.entries(CloseCode).map(([name, code]) => [code, name]))

export class IngestServer {
  private readonly wss: WebSocketServer
  readonly connections = new Set<DeviceConnection>()
  /** Refusals by close code, for tests, the bench and the health figures. */
  readonly refusals = new Map<number, number>()

  constructor(private readonly deps: IngestDeps) {
    this.wss = new WebSocketServer({
      noServer: true,
      maxPayload: deps.limits.hardMaxPayloadBytes,
      perMessageDeflate: false,
      clientTracking: false,
    })
  }

  handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): void {
    socket.on('error', () => socket.destroy())
    this.wss.handleUpgrade(req, socket, head, (ws) => {
      const connection = new DeviceConnection(ws, req, this.deps, this)
      this.connections.add(connection)
      if (this.deps.isClosing()) connection.refuse(CloseCode.serverShutdown, 'the server is shutting down; reconnect later')
    })
  }

  countRefusal(code: number): void {
    this.refusals.set(code, (this.refusals.get(code) ?? 0) + 1)
  }

  async closeAll(code: number, reason: string): Promise<void> {
    const closing = [...this.connections].map((c) => c.closeAndWait(code, reason))
    await Promise.race([Promise.all(closing), new Promise((r) => setTimeout(r, 2_000))])
    for (const c of this.connections) c.terminate()
    this.wss.close()
  }
}

type State = 'hello' | 'auth' | 'streaming' | 'closed'

/** Throttles repeated events of one kind to one per second, carrying the count of the rest. */
class EventThrottle {
  private last = new Map<string, { at: number; suppressed: number }>()
  take(kind: string, now: number): { emit: boolean; suppressed: number } {
    const entry = this.last.get(kind)
    if (!entry || now - entry.at >= 1000) {
      const suppressed = entry?.suppressed ?? 0
      this.last.set(kind, { at: now, suppressed: 0 })
      return { emit: true, suppressed }
    }
    entry.suppressed++
    return { emit: false, suppressed: 0 }
  }
}

class DeviceConnection implements LinkHandle {
  readonly id = randomUUID()
  tokenId: string | null = null
  device = 'unnamed device'
  channels: string[] = []
  rateHz = 0
  connectedAt = new Date()
  lastFrameAt = Date.now()
  private state: State = 'hello'
  private session: LiveSession | null = null
  /** Session known from the token even when the link is refused (for the event record). */
  private recordSessionId: string | null = null
  private tracker: SequenceTracker = new SequenceTracker(null)
  private guard: RateGuard | null = null
  private pending: { data: RawData; isBinary: boolean }[] = []
  private helloTimer: NodeJS.Timeout
  private watchTimer: NodeJS.Timeout | null = null
  private pingTimer: NodeJS.Timeout | null = null
  private alive = true
  private lastBlockAt = Date.now()
  private closedPromise: Promise<void>
  private throttle = new EventThrottle()
  private readonly remote: string | null

  constructor(
    private readonly ws: WebSocket,
    req: IncomingMessage,
    private readonly deps: IngestDeps,
    private readonly server: IngestServer,
  ) {
    this.remote = req.socket.remoteAddress ?? null
    this.helloTimer = setTimeout(
      () => this.refuse(CloseCode.helloRequired, `no hello within ${deps.limits.helloTimeoutMs} ms`),
      deps.limits.helloTimeoutMs,
    )
    this.closedPromise = new Promise((resolve) => ws.once('close', () => resolve()))
    ws.on('message', (data, isBinary) => this.onMessage(data, isBinary))
    ws.on('pong', () => (this.alive = true))
    ws.on('error', (error: Error & { code?: string }) => {
      // The WebSocket layer refused a frame itself (for example over the hard size limit: 1009).
      if (error.code === 'WS_ERR_UNSUPPORTED_MESSAGE_LENGTH') {
        this.server.countRefusal(1009)
        this.record('protocol_violation', { code: 1009, name: 'messageTooBig', reason: `frame over ${deps.limits.hardMaxPayloadBytes} bytes` })
      }
    })
    ws.on('close', (code, reason) => this.onClose(code, reason.toString()))
  }

  // ---- LinkHandle -------------------------------------------------------------------------

  send(message: ServerMessage): void {
    if (this.ws.readyState === this.ws.OPEN) this.ws.send(JSON.stringify(message))
  }

  close(code: number, reason: string): void {
    if (this.state === 'closed') return
    if (code >= 4000 && code !== CloseCode.serverShutdown) this.refuse(code, reason)
    else this.finish(code, reason)
  }

  resumeFrom(sample: number): void {
    this.tracker = new SequenceTracker(sample)
  }

  closeAndWait(code: number, reason: string): Promise<void> {
    this.close(code, reason)
    return this.closedPromise
  }

  terminate(): void {
    this.ws.terminate()
  }

  // ---- frames -----------------------------------------------------------------------------

  private onMessage(data: RawData, isBinary: boolean): void {
    if (this.state === 'closed') return
    this.lastFrameAt = Date.now()
    if (this.state === 'auth') {
      if (this.pending.length >= this.deps.limits.maxFramesBeforeWelcome) {
        this.refuse(CloseCode.helloRequired, `more than ${this.deps.limits.maxFramesBeforeWelcome} frames before the welcome`)
        return
      }
      this.pending.push({ data, isBinary })
      return
    }
    try {
      if (this.state === 'hello') this.onHello(data, isBinary)
      else if (isBinary) this.onBlock(toBytes(data))
      else this.onText(data.toString())
    } catch (error) {
      if (error instanceof FrameError) this.refuse(error.code, error.message)
      else {
        this.deps.log('error', 'ingest.unexpected', { error: String(error) })
        this.refuse(CloseCode.badFrame, 'the server could not process this frame')
      }
    }
  }

  private onHello(data: RawData, isBinary: boolean): void {
    if (isBinary) throw new FrameError(CloseCode.helloRequired, 'a sample block arrived before the hello')
    let json: unknown
    try {
      json = parseJsonFrame(data.toString())
    } catch (error) {
      if (error instanceof FrameError && error.code === CloseCode.badMessage) throw new FrameError(CloseCode.badHello, 'hello is not valid JSON')
      throw error
    }
    const type = (json as { type?: unknown } | null)?.type
    if (type !== 'hello') throw new FrameError(CloseCode.helloRequired, `the first message must be a hello, got ${typeof type === 'string' ? type : 'no type'}`)
    const protocol = (json as { protocol?: unknown }).protocol
    if (typeof protocol === 'number' && protocol !== PROTOCOL_VERSION) throw new FrameError(CloseCode.badVersion, `protocol ${protocol} is not supported; this server speaks ${PROTOCOL_VERSION}`)
    const parsed = helloSchema.safeParse(json)
    if (!parsed.success) {
      const issue = parsed.error.issues[0]
      // A missing or malformed token is an authentication failure, not a hello format error.
      if (issue.path[0] === 'token') throw new FrameError(CloseCode.unauthorized, 'hello carries no valid device token')
      throw new FrameError(CloseCode.badHello, `hello: ${issue.path.join('.') || 'message'}: ${issue.message}`)
    }
    clearTimeout(this.helloTimer)
    this.state = 'auth'
    void this.authenticate(parsed.data)
  }

  private async authenticate(hello: Hello): Promise<void> {
    try {
      const token = await checkDeviceToken(this.deps.db, hello.token)
      if (this.state !== 'auth') return
      if (!token.ok) {
        this.recordSessionId = token.sessionId
        const code = token.reason === 'expired' ? CloseCode.tokenExpired : token.reason === 'revoked' ? CloseCode.tokenRevoked : CloseCode.unauthorized
        return this.refuse(code, token.reason === 'unknown' ? 'unknown device token' : `device token ${token.reason}`)
      }
      this.recordSessionId = token.sessionId
      if (hello.sessionId && hello.sessionId !== token.sessionId) {
        return this.refuse(CloseCode.unauthorized, 'this device token belongs to another session')
      }
      const session = await this.deps.getSession(token.sessionId)
      if (this.state !== 'auth') return
      if (!session) return this.refuse(CloseCode.sessionClosed, 'the session no longer exists')
      if (this.deps.isClosing()) return this.refuse(CloseCode.serverShutdown, 'the server is shutting down; reconnect later')
      if (session.setup.status === 'ended' || session.setup.status === 'imported' || session.setup.lockedAt) {
        return this.refuse(CloseCode.sessionClosed, `the session is ${session.setup.lockedAt ? 'signed off' : session.setup.status}; it takes no device`)
      }
      const mismatch = session.checkHello(hello.channels, hello.rateHz)
      if (mismatch) return this.refuse(CloseCode.montageMismatch, mismatch)
      const current = session.link
      if (current) {
        if (Date.now() - current.lastFrameAt < this.deps.limits.staleLinkMs) {
          return this.refuse(CloseCode.alreadyConnected, 'another device link is streaming for this session')
        }
        current.close(CloseCode.alreadyConnected, 'replaced by a newer device link for this session')
      }
      this.tokenId = token.tokenId
      this.device = hello.device
      this.channels = hello.channels
      this.rateHz = hello.rateHz
      this.connectedAt = new Date()
      this.session = session
      this.guard = new RateGuard(
        {
          rateHz: hello.rateHz,
          maxFramesPerSecond: this.deps.limits.maxFramesPerSecond,
          frameBurst: this.deps.limits.frameBurst,
          maxAheadSeconds: this.deps.limits.maxAheadSeconds,
          slowWindowMs: this.deps.limits.slowWindowMs,
          slowFraction: this.deps.limits.slowFraction,
        },
        Date.now(),
      )
      this.tracker = new SequenceTracker(null)
      const { runId, nextSample } = session.attachLink(this)
      this.state = 'streaming'
      this.lastBlockAt = Date.now()
      this.send({ type: 'welcome', protocol: PROTOCOL_VERSION, sessionId: session.id, runId, nextSample })
      const run = session.runInfo()
      if (run && (run.status === 'running' || run.status === 'paused')) this.send({ type: 'run', runId: run.id, kind: run.kind, state: run.status })
      if (hello.resumeRunId && hello.resumeRunId !== runId) {
        this.send({ type: 'warning', code: 'run-not-resumable', detail: 'that run is no longer in progress; samples now go to the next run the operator starts' })
      }
      void this.deps.db.update(deviceTokens).set({ lastUsedAt: new Date() }).where(eq(deviceTokens.id, token.tokenId)).catch(() => undefined)
      this.startWatch()
      const queued = this.pending
      this.pending = []
      for (const frame of queued) this.onMessage(frame.data, frame.isBinary)
    } catch (error) {
      this.deps.log('error', 'ingest.auth-failed', { error: String(error) })
      this.refuse(CloseCode.notReady, 'the server could not check this device token; try again')
    }
  }

  private onBlock(frame: Uint8Array): void {
    const now = Date.now()
    const guard = this.guard!
    const flood = guard.frame(now)
    if (!flood.ok) throw new FrameError(CloseCode.rateLimited, flood.reason)
    if (frame.byteLength > MAX_FRAME_BYTES) throw new FrameError(CloseCode.frameTooLarge, `frame of ${frame.byteLength} bytes exceeds ${MAX_FRAME_BYTES}`)
    const receivedAt = performance.now()
    const block = decodeBlock(frame, this.channels.length)
    const session = this.session!
    const verdict = this.tracker.classify(block.seq, block.firstSample, block.sampleCount)
    switch (verdict.kind) {
      case 'backwards':
        throw new FrameError(CloseCode.timeBackwards, verdict.reason)
      case 'duplicate':
        session.counts.duplicates++
        this.throttledEvent('duplicate_block', block.firstSample, { seq: block.seq })
        return
      case 'reordered':
        session.counts.reordered++
        this.throttledEvent('reordered_block', block.firstSample, { seq: block.seq })
        session.onLateBlock(this, block.firstSample, block.samples)
        return
      case 'gap':
        session.counts.sequenceGaps++
        this.throttledEvent('sequence_gap', block.firstSample, { seq: block.seq, missingBlocks: verdict.missingSeqs, missingSamples: verdict.missingSamples })
        break
      case 'sample-gap':
        this.throttledEvent('sample_gap', block.firstSample, { seq: block.seq, missingSamples: verdict.missingSamples })
        break
      case 'in-order':
        break
    }
    let { firstSample, samples, sampleCount } = block
    if (verdict.trimFrom > 0) {
      samples = samples.slice(verdict.trimFrom * this.channels.length)
      firstSample += verdict.trimFrom
      sampleCount -= verdict.trimFrom
    }
    const ahead = guard.samplesArrived(sampleCount, now)
    if (!ahead.ok) throw new FrameError(CloseCode.rateLimited, `sending faster than the declared rate: ${ahead.reason}`)
    this.lastBlockAt = now
    session.onBlock(this, block.seq, firstSample, samples, sampleCount, receivedAt)
  }

  private onText(text: string): void {
    const guard = this.guard!
    const flood = guard.frame(Date.now())
    if (!flood.ok) throw new FrameError(CloseCode.rateLimited, flood.reason)
    const json = parseJsonFrame(text)
    if ((json as { type?: unknown } | null)?.type === 'hello') throw new FrameError(CloseCode.badMessage, 'hello already received on this link')
    const parsed = deviceMessageSchema.safeParse(json)
    if (!parsed.success) {
      const type = (json as { type?: unknown } | null)?.type
      throw new FrameError(CloseCode.badMessage, typeof type === 'string' && !['marker', 'bye'].includes(type) ? `unknown message type ${type.slice(0, 40)}` : `message: ${parsed.error.issues[0].message}`)
    }
    if (parsed.data.type === 'marker') this.session!.onMarker(parsed.data.sample, parsed.data.label)
    else this.finish(CloseCode.normal, 'bye')
  }

  private throttledEvent(kind: string, sample: number, detail: Record<string, unknown>): void {
    const t = this.throttle.take(kind, Date.now())
    if (t.emit) this.session!.event(kind, sample, t.suppressed > 0 ? { ...detail, alsoSince: t.suppressed } : detail)
  }

  // ---- timers -----------------------------------------------------------------------------

  private startWatch(): void {
    this.watchTimer = setInterval(() => {
      const now = Date.now()
      if (now - this.lastBlockAt > this.deps.limits.idleTimeoutMs) {
        return this.refuse(CloseCode.tooSlow, `no sample block for ${Math.round((now - this.lastBlockAt) / 1000)} s`)
      }
      const slow = this.guard!.checkSlow(now)
      if (slow.slow) return this.refuse(CloseCode.tooSlow, `delivering ${slow.rateHz.toFixed(0)} Hz of the declared ${this.rateHz} Hz`)
      if (slow.warn) this.send({ type: 'warning', code: 'slow', detail: `delivering ${slow.rateHz.toFixed(0)} Hz of the declared ${this.rateHz} Hz` })
    }, Math.min(1000, Math.max(50, Math.floor(this.deps.limits.idleTimeoutMs / 4))))
    this.watchTimer.unref()
    this.pingTimer = setInterval(() => {
      if (!this.alive) {
        this.record('device_unresponsive', { reason: 'no pong to two pings' })
        this.ws.terminate()
        return
      }
      this.alive = false
      this.ws.ping()
    }, this.deps.limits.pingIntervalMs)
    this.pingTimer.unref()
  }

  // ---- closing ----------------------------------------------------------------------------

  /** Closes for a protocol violation: recorded, counted, told to the device, then closed. */
  refuse(code: number, reason: string): void {
    if (this.state === 'closed') return
    this.server.countRefusal(code)
    this.record('protocol_violation', { code, name: CODE_NAMES[code] ?? 'unknown', reason })
    this.send({ type: 'error', code, reason })
    this.finish(code, reason)
  }

  private finish(code: number, reason: string): void {
    if (this.state === 'closed') return
    this.state = 'closed'
    this.stopTimers()
    this.pending = []
    try {
      this.ws.close(code, closeReason(reason))
    } catch {
      this.ws.terminate()
    }
    // A peer that ignores the close handshake is cut off.
    setTimeout(() => this.ws.terminate(), 2_000).unref()
  }

  private onClose(code: number, reason: string): void {
    const wasStreaming = this.session !== null
    this.state = 'closed'
    this.stopTimers()
    this.server.connections.delete(this)
    if (wasStreaming) this.session!.detachLink(this, reason || `closed (${code})`)
  }

  private stopTimers(): void {
    clearTimeout(this.helloTimer)
    if (this.watchTimer) clearInterval(this.watchTimer)
    if (this.pingTimer) clearInterval(this.pingTimer)
  }

  private record(kind: string, detail: Record<string, unknown>): void {
    const sessionId = this.session?.id ?? this.recordSessionId
    if (this.session) {
      this.session.event(kind, null, detail)
      return
    }
    if (sessionId) {
      // Known session but no live link (e.g. revoked token): still a session event.
      void this.deps.getSession(sessionId).then((s) => s?.event(kind, null, detail)).catch(() => undefined)
      return
    }
    void this.deps.db
      .insert(auditEvents)
      .values({ labId: null, actorId: null, action: 'ingest.refused', target: null, detail: { ...detail, remote: this.remote }, ip: this.remote })
      .catch(() => undefined)
  }
}

function toBytes(data: RawData): Uint8Array {
  if (Array.isArray(data)) return new Uint8Array(Buffer.concat(data))
  if (data instanceof ArrayBuffer) return new Uint8Array(data)
  return data
}
