// Live mode (Node only): a simulated participant streamed as a device link to a session's
// /ingest WebSocket. The wall clock paces the blocks; cues from the server steer the
// participant; faults are injected on request. The wire format is app/ingest/protocol.ts.
import WebSocket from 'ws'
import type { ChannelPosition } from '../app/engine/montage'
import { CloseCode, PROTOCOL_VERSION, encodeBlock, type Hello, type ServerMessage } from '../app/ingest/protocol'
import { FAULT_KINDS, NO_FAULTS, decideBlockFaults, validateFaultSettings, type FaultKind, type FaultLogEntry, type FaultSettings } from './faults'
import {
  createSimulatedParticipant,
  type ArtifactSettings,
  type CuePhase,
  type RhythmSettings,
  type SimulatedParticipant,
  type SimulationTruth,
} from './generator'
import type { ParticipantSettings } from './participant'
import { StreamPurpose, createRandomStream } from './random'

export interface LiveDeviceOptions {
  /** ws:// or wss:// address of the ingest endpoint, e.g. ws://127.0.0.1:3000/ingest */
  url: string
  /** The session's device token. */
  token: string
  /** 10-10 names or montage entries; `montage` is accepted as another name for it. */
  channels?: readonly (string | ChannelPosition)[]
  montage?: readonly (string | ChannelPosition)[]
  rateHz?: number
  /** Samples per block (default: 40 ms worth). */
  blockSamples?: number
  seed?: number
  /** Name the device gives in its hello. */
  device?: string
  classes?: readonly string[]
  skill?: number
  participant?: Partial<ParticipantSettings>
  rhythms?: Partial<RhythmSettings>
  artifacts?: Partial<ArtifactSettings>
  faults?: Partial<FaultSettings>
  /** Reconnect after a dropped link or a recoverable close (default true). */
  reconnect?: boolean
  maxReconnects?: number
  /** Blocks kept for resending after a reconnect, seconds (default 30). */
  bufferSeconds?: number
  /** Time scale for rehearsal and tests: 2 streams twice as fast as real time (default 1). */
  speed?: number
}

export type LiveDeviceState = 'connecting' | 'streaming' | 'reconnecting' | 'stopped'

export interface LiveDeviceStats {
  blocksSent: number
  samplesGenerated: number
  reconnects: number
  lastAck: { durableSeq: number; durableSample: number } | null
  lastClose: { code: number; reason: string } | null
  runId: string | null
  sessionId: string | null
  cuesReceived: number
}

export interface LiveDeviceEvents {
  state: LiveDeviceState
  message: ServerMessage
  cue: Extract<ServerMessage, { type: 'cue' }>
  fault: FaultLogEntry
  close: { code: number; reason: string; willReconnect: boolean }
}

export interface LiveDeviceUpdate {
  skill?: number
  participant?: Partial<ParticipantSettings>
  artifacts?: Partial<ArtifactSettings>
  faults?: Partial<FaultSettings>
}

export interface LiveDevice {
  readonly state: LiveDeviceState
  readonly stats: LiveDeviceStats
  readonly channels: string[]
  readonly rateHz: number
  /** Sends a bye, closes the link and stops the pacer. */
  stop(): Promise<void>
  update(settings: LiveDeviceUpdate): void
  setSkill(skill: number): void
  setArtifacts(settings: Partial<ArtifactSettings>): void
  setFaults(settings: Partial<FaultSettings>): void
  /** One fault on the next block (queued one per block), or for 'disconnect' now. */
  inject(kind: FaultKind): void
  faultLog(): FaultLogEntry[]
  truth(): SimulationTruth
  on<E extends keyof LiveDeviceEvents>(event: E, listener: (value: LiveDeviceEvents[E]) => void): () => void
}

/** Close codes after which reconnecting cannot help: the token, session or montage is wrong. */
const FATAL_CLOSE_CODES = new Set<number>([
  CloseCode.normal,
  CloseCode.badHello,
  CloseCode.badVersion,
  CloseCode.unauthorized,
  CloseCode.tokenExpired,
  CloseCode.tokenRevoked,
  CloseCode.sessionClosed,
  CloseCode.montageMismatch,
])
const MAX_LOG_ENTRIES = 1000
/** Never generate more than this much in one timer tick, so a stalled loop cannot spiral. */
const MAX_CATCH_UP_SECONDS = 2

interface SentBlock {
  seq: number
  firstSample: number
  bytes: Uint8Array
}

export function startLiveDevice(options: LiveDeviceOptions): LiveDevice {
  const channelsIn = options.channels ?? options.montage
  if (!channelsIn) throw new Error('a live device needs channels (or a montage)')
  if (!/^wss?:\/\//.test(options.url)) throw new Error(`ingest url must start with ws:// or wss://, got '${options.url}'`)
  if (typeof options.token !== 'string' || options.token.length < 8) throw new Error('device token is missing or too short')
  const rateHz = options.rateHz ?? 250
  const blockSamples = options.blockSamples ?? Math.max(1, Math.round(rateHz * 0.04))
  if (!Number.isInteger(blockSamples) || blockSamples < 1 || blockSamples > 1024) throw new Error(`block size must be 1..1024 samples, got ${blockSamples}`)
  const speed = options.speed ?? 1
  if (!(speed > 0 && speed <= 1000)) throw new Error(`speed must be between 0 and 1000, got ${speed}`)
  const seed = options.seed ?? Date.now() % 2 ** 31
  const participant: SimulatedParticipant = createSimulatedParticipant({
    channels: channelsIn,
    rateHz,
    seed,
    classes: options.classes,
    rhythms: options.rhythms,
    artifacts: options.artifacts,
    participant: { ...options.participant, ...(options.skill !== undefined ? { skill: options.skill } : {}) },
  })
  const C = participant.channelCount
  const channelNames = participant.channels.map((c) => c.name)
  let faults: FaultSettings = { ...NO_FAULTS, ...options.faults }
  validateFaultSettings(faults)
  const faultRandom = createRandomStream(seed, StreamPurpose.faults)
  // One-shot faults asked for by hand, one per block in the order asked.
  const forcedQueue: FaultKind[] = []
  const reconnect = options.reconnect ?? true
  const maxReconnects = options.maxReconnects ?? 100
  const bufferBlocks = Math.max(1, Math.ceil(((options.bufferSeconds ?? 30) * rateHz) / blockSamples))

  let state: LiveDeviceState = 'connecting'
  const stats: LiveDeviceStats = { blocksSent: 0, samplesGenerated: 0, reconnects: 0, lastAck: null, lastClose: null, runId: null, sessionId: null, cuesReceived: 0 }
  const log: FaultLogEntry[] = []
  const listeners = new Map<keyof LiveDeviceEvents, Set<(v: never) => void>>()
  const emit = <E extends keyof LiveDeviceEvents>(event: E, value: LiveDeviceEvents[E]) => {
    for (const l of listeners.get(event) ?? []) {
      try {
        ;(l as (v: LiveDeviceEvents[E]) => void)(value)
      } catch {
        // A listener's failure must not stop the stream.
      }
    }
  }
  const record = (entry: Omit<FaultLogEntry, 'at'>) => {
    const full = { at: new Date().toISOString(), ...entry }
    log.push(full)
    if (log.length > MAX_LOG_ENTRIES) log.splice(0, log.length - MAX_LOG_ENTRIES)
    emit('fault', full)
  }
  const setState = (next: LiveDeviceState) => {
    if (state === next) return
    state = next
    emit('state', next)
  }

  let socket: WebSocket | null = null
  let welcomed = false
  let sampleOffset: number | null = null // stream sample = generator sample + offset
  let seq = 0
  let heldForReorder: SentBlock | null = null
  const ring: SentBlock[] = []
  let startMs = 0 // wall time at which generator sample 0 was due
  let timer: ReturnType<typeof setTimeout> | null = null
  let reconnectTimer: ReturnType<typeof setTimeout> | null = null
  let nextDisconnectMs = Infinity
  let lastSendAt = 0
  const block = new Float32Array(blockSamples * C)

  const send = (bytes: Uint8Array, delayMs: number) => {
    const ws = socket
    if (!ws || !welcomed || ws.readyState !== WebSocket.OPEN) return
    if (delayMs <= 0 && lastSendAt <= performance.now()) {
      ws.send(bytes)
      return
    }
    // Jitter delays a block without letting it overtake the ones before (a late network).
    const at = Math.max(performance.now() + delayMs, lastSendAt)
    lastSendAt = at
    setTimeout(() => {
      if (socket === ws && ws.readyState === WebSocket.OPEN) ws.send(bytes)
    }, at - performance.now())
  }

  const produceBlock = () => {
    participant.generate(blockSamples, block)
    const generatorFirst = stats.samplesGenerated
    stats.samplesGenerated += blockSamples
    if (sampleOffset === null) return // not yet welcomed: the amplifier runs but nothing is numbered
    const firstSample = generatorFirst + sampleOffset
    const forcedKind = forcedQueue.shift()
    const decision = decideBlockFaults(faults, faultRandom, new Set(forcedKind ? [forcedKind] : []))
    const forcedJitter = forcedKind === 'jitter'
    const thisSeq = seq++
    const clean = encodeBlock({ seq: thisSeq, firstSample, channelCount: C, samples: block })
    if (decision.drop) {
      record({ kind: 'drop', seq: thisSeq, firstSample, detail: `block of ${blockSamples} samples not sent` })
      return
    }
    ring.push({ seq: thisSeq, firstSample, bytes: clean })
    if (ring.length > bufferBlocks) ring.shift()
    let bytes = clean
    if (decision.nan) {
      const bad = block.slice(0, blockSamples * C)
      const at = faultRandom.integer(bad.length)
      bad[at] = Number.NaN
      bytes = encodeBlock({ seq: thisSeq, firstSample, channelCount: C, samples: bad })
      record({ kind: 'nan', seq: thisSeq, firstSample, detail: `sample ${Math.floor(at / C)} of channel ${channelNames[at % C]} set to NaN` })
    } else if (decision.wrongChannelCount && C > 1) {
      const fewer = new Float32Array(blockSamples * (C - 1))
      for (let s = 0; s < blockSamples; s++) fewer.set(block.subarray(s * C, s * C + C - 1), s * (C - 1))
      bytes = encodeBlock({ seq: thisSeq, firstSample, channelCount: C - 1, samples: fewer })
      record({ kind: 'wrong-channel-count', seq: thisSeq, firstSample, detail: `block sent with ${C - 1} channels instead of ${C}` })
    }
    // Routine jitter is not logged block by block (it would flood the log); a forced one is.
    if (forcedJitter) record({ kind: 'jitter', seq: thisSeq, firstSample, detail: `block delayed ${decision.delayMs.toFixed(0)} ms` })
    const outgoing: SentBlock = { seq: thisSeq, firstSample, bytes }
    if (heldForReorder) {
      send(outgoing.bytes, decision.delayMs)
      send(heldForReorder.bytes, decision.delayMs)
      record({ kind: 'reorder', seq: heldForReorder.seq, firstSample: heldForReorder.firstSample, detail: `sent after block ${outgoing.seq}` })
      heldForReorder = null
    } else if (decision.reorder) {
      heldForReorder = outgoing
    } else {
      send(outgoing.bytes, decision.delayMs)
    }
    if (decision.duplicate) {
      send(outgoing.bytes, decision.delayMs)
      record({ kind: 'duplicate', seq: thisSeq, firstSample, detail: 'block sent twice' })
    }
    stats.blocksSent++
  }

  const tick = () => {
    timer = null
    if (state === 'stopped') return
    const now = performance.now()
    const dueSamples = Math.floor(((now - startMs) * rateHz * speed) / 1000)
    const limit = stats.samplesGenerated + Math.ceil(MAX_CATCH_UP_SECONDS * rateHz)
    while (stats.samplesGenerated + blockSamples <= dueSamples && stats.samplesGenerated < limit) produceBlock()
    if (dueSamples - stats.samplesGenerated > MAX_CATCH_UP_SECONDS * rateHz) {
      // The process could not keep up: skip ahead rather than fall further behind.
      const skipped = dueSamples - stats.samplesGenerated
      record({ kind: 'behind', detail: `generator ${(skipped / rateHz).toFixed(1)} s behind the wall clock; skipping ahead` })
      startMs = now - ((stats.samplesGenerated * 1000) / (rateHz * speed))
    }
    if (state === 'streaming' && now >= nextDisconnectMs) {
      record({ kind: 'disconnect', detail: `link dropped on schedule (every ${faults.disconnectEverySeconds} s)` })
      dropLink()
    }
    const nextDue = startMs + ((stats.samplesGenerated + blockSamples) * 1000) / (rateHz * speed)
    timer = setTimeout(tick, Math.max(0, nextDue - performance.now()))
  }

  const scheduleDisconnect = () => {
    nextDisconnectMs = faults.disconnectEverySeconds > 0 ? performance.now() + faults.disconnectEverySeconds * 1000 : Infinity
  }

  const dropLink = () => {
    // Like a pulled cable: no close handshake; the server sees the connection vanish.
    const ws = socket
    if (ws) ws.terminate()
  }

  const onMessage = (text: string) => {
    if (state === 'stopped') return // e.g. a reply to our bye while closing
    let message: ServerMessage
    try {
      message = JSON.parse(text) as ServerMessage
    } catch {
      record({ kind: 'server-error', detail: 'server sent a text frame that is not JSON' })
      return
    }
    emit('message', message)
    switch (message.type) {
      case 'welcome': {
        welcomed = true
        stats.sessionId = message.sessionId
        stats.runId = message.runId
        if (sampleOffset === null || message.runId === null) {
          // A fresh link (no run to resume): number from the server's nextSample on; what was
          // buffered under the old numbering is of no use to it.
          sampleOffset = message.nextSample - stats.samplesGenerated
          ring.length = 0
        } else {
          // Resend what the server did not get while the link was down, if still buffered.
          const resend = ring.filter((b) => b.firstSample >= message.nextSample)
          for (const b of resend) send(b.bytes, 0)
          if (resend.length > 0) record({ kind: 'reconnect', detail: `resent ${resend.length} buffered blocks from sample ${resend[0].firstSample}` })
        }
        scheduleDisconnect()
        setState('streaming')
        break
      }
      case 'run':
        stats.runId = message.runId
        break
      case 'cue': {
        stats.cuesReceived++
        stats.runId = message.runId
        const phase = message.phase as CuePhase
        participant.cue({ trial: message.trial, label: message.label, phase, atSample: message.atSample - (sampleOffset ?? 0), runId: message.runId })
        emit('cue', message)
        break
      }
      case 'ack':
        stats.lastAck = { durableSeq: message.durableSeq, durableSample: message.durableSample }
        break
      case 'warning':
        record({ kind: 'server-warning', detail: `${message.code}: ${message.detail}` })
        break
      case 'error':
        record({ kind: 'server-error', detail: `${message.code}: ${message.reason}` })
        break
    }
  }

  const connect = () => {
    welcomed = false
    heldForReorder = null
    lastSendAt = 0
    const ws = new WebSocket(options.url, { maxPayload: 1024 * 1024 })
    socket = ws
    ws.on('open', () => {
      const hello: Hello = {
        type: 'hello',
        protocol: PROTOCOL_VERSION,
        token: options.token,
        device: options.device ?? 'Tiller simulator',
        channels: channelNames,
        rateHz,
        units: 'uV',
        ...(stats.runId && stats.reconnects > 0 ? { resumeRunId: stats.runId } : {}),
      }
      ws.send(JSON.stringify(hello))
    })
    ws.on('message', (data, isBinary) => {
      if (!isBinary) onMessage(data.toString())
    })
    ws.on('error', (error) => {
      // 'close' follows; keep the reason for the log.
      stats.lastClose = { code: 1006, reason: error.message }
    })
    ws.on('close', (code, reasonBuffer) => {
      if (socket !== ws) return
      socket = null
      welcomed = false
      const reason = reasonBuffer.toString() || stats.lastClose?.reason || ''
      stats.lastClose = { code, reason }
      if (state === 'stopped') return
      const willReconnect = reconnect && !FATAL_CLOSE_CODES.has(code) && stats.reconnects < maxReconnects
      record({ kind: 'server-close', detail: `link closed with ${code}${reason ? ` (${reason})` : ''}${willReconnect ? '; reconnecting' : ''}` })
      emit('close', { code, reason, willReconnect })
      if (!willReconnect) {
        void stopInternal(false)
        return
      }
      setState('reconnecting')
      reconnectTimer = setTimeout(() => {
        reconnectTimer = null
        if (state === 'stopped') return
        stats.reconnects++
        connect()
      }, faults.reconnectDelayMs)
    })
  }

  const stopInternal = async (sayBye: boolean) => {
    if (state === 'stopped') return
    setState('stopped')
    if (timer) clearTimeout(timer)
    if (reconnectTimer) clearTimeout(reconnectTimer)
    timer = null
    reconnectTimer = null
    const ws = socket
    socket = null
    if (!ws) return
    await new Promise<void>((resolve) => {
      const done = setTimeout(() => {
        ws.terminate()
        resolve()
      }, 2000)
      ws.once('close', () => {
        clearTimeout(done)
        resolve()
      })
      if (ws.readyState === WebSocket.OPEN) {
        if (sayBye) ws.send(JSON.stringify({ type: 'bye' }))
        ws.close(CloseCode.normal, 'device stopped')
      } else if (ws.readyState === WebSocket.CONNECTING) {
        ws.terminate()
      } else {
        clearTimeout(done)
        resolve()
      }
    })
  }

  const setFaults = (settings: Partial<FaultSettings>) => {
    const next = { ...faults, ...settings }
    validateFaultSettings(next)
    faults = next
    if (state === 'streaming') scheduleDisconnect()
  }

  startMs = performance.now()
  connect()
  timer = setTimeout(tick, 0)

  return {
    get state() {
      return state
    },
    get stats() {
      return { ...stats }
    },
    channels: channelNames,
    rateHz,
    stop: () => stopInternal(true),
    update(settings) {
      if (settings.skill !== undefined) participant.setParticipant({ skill: settings.skill })
      if (settings.participant) participant.setParticipant(settings.participant)
      if (settings.artifacts) participant.setArtifacts(settings.artifacts)
      if (settings.faults) setFaults(settings.faults)
    },
    setSkill: (skill) => participant.setParticipant({ skill }),
    setArtifacts: (settings) => participant.setArtifacts(settings),
    setFaults,
    inject(kind) {
      if (!FAULT_KINDS.includes(kind)) throw new Error(`unknown fault '${String(kind)}'; use ${FAULT_KINDS.join(', ')}`)
      if (kind === 'disconnect') {
        record({ kind: 'disconnect', detail: 'link dropped on request' })
        dropLink()
      } else if (forcedQueue.length < 100) forcedQueue.push(kind)
    },
    faultLog: () => log.map((e) => ({ ...e })),
    truth: () => participant.truth(),
    on(event, listener) {
      const set = listeners.get(event) ?? new Set()
      set.add(listener as (v: never) => void)
      listeners.set(event, set)
      return () => set.delete(listener as (v: never) => void)
    },
  }
}
