// The decoding workers, seen from the main thread: one worker per core (at most
// `limits.workers`), each hosting many session pipelines. A session is placed on the worker
// with the fewest sessions and stays there, so its blocks are processed in order. If a worker
// dies, its sessions are told (they close their device links with 4503) and a new worker
// replaces it.
import { Worker } from 'node:worker_threads'
import type { Decoder } from '../engine/decoder.ts'
import type { BlockMessage, FromWorker, PipelineSettings, ResultMessage, ToWorker } from './pipeline-messages.ts'

export interface PipelineListener {
  onResult(message: ResultMessage): void
  onDisplay(message: Extract<FromWorker, { t: 'display' }>): void
  onError(message: string): void
  onWorkerLost(): void
}

interface Slot {
  worker: Worker
  sessions: Set<string>
  ready: Promise<void>
  /** Blocks waiting for the end of this event-loop turn, sent to the worker as one message. */
  pending: BlockMessage[]
  flushScheduled: boolean
}

const bootUrl = new URL('./worker-boot.mjs', import.meta.url)
const entryUrl = new URL('./pipeline-worker.ts', import.meta.url).href

export class PipelinePool {
  private slots: Slot[] = []
  private placement = new Map<string, Slot>()
  private listeners = new Map<string, PipelineListener>()
  private displayTimer: NodeJS.Timeout
  private closing = false

  constructor(
    private readonly workerCount: number,
    displayIntervalMs: number,
  ) {
    for (let i = 0; i < workerCount; i++) this.slots.push(this.spawn())
    this.displayTimer = setInterval(() => {
      for (const slot of this.slots) if (slot.sessions.size > 0) slot.worker.postMessage({ t: 'display-tick' } satisfies ToWorker)
    }, displayIntervalMs)
    this.displayTimer.unref()
  }

  async ready(): Promise<void> {
    await Promise.all(this.slots.map((s) => s.ready))
  }

  private spawn(): Slot {
    const worker = new Worker(bootUrl, { workerData: { entry: entryUrl }, name: 'tiller-decoding' })
    let markReady!: () => void
    const slot: Slot = { worker, sessions: new Set(), ready: new Promise((r) => (markReady = r)), pending: [], flushScheduled: false }
    worker.on('message', (message: FromWorker) => {
      if (message.t === 'ready') return markReady()
      if (message.t === 'results') {
        for (const result of message.results) this.listeners.get(result.sessionId)?.onResult(result)
        return
      }
      const listener = this.listeners.get(message.sessionId)
      if (!listener) return
      if (message.t === 'display') listener.onDisplay(message)
      else listener.onError(message.message)
    })
    worker.on('error', () => this.replace(slot))
    worker.on('exit', () => this.replace(slot))
    return slot
  }

  private replace(slot: Slot): void {
    const index = this.slots.indexOf(slot)
    if (index < 0 || this.closing) return
    const lost = [...slot.sessions]
    slot.sessions.clear()
    this.slots[index] = this.spawn()
    for (const sessionId of lost) {
      this.placement.delete(sessionId)
      this.listeners.get(sessionId)?.onWorkerLost()
    }
  }

  open(
    sessionId: string,
    input: { channels: string[]; rateHz: number; displayBand: [number, number]; displayRateHz: number; decoder: Decoder | null; settings: PipelineSettings },
    listener: PipelineListener,
  ): void {
    this.close(sessionId)
    const slot = this.slots.reduce((best, s) => (s.sessions.size < best.sessions.size ? s : best), this.slots[0])
    slot.sessions.add(sessionId)
    this.placement.set(sessionId, slot)
    this.listeners.set(sessionId, listener)
    slot.worker.postMessage({ t: 'open', sessionId, ...input } satisfies ToWorker)
  }

  has(sessionId: string): boolean {
    return this.placement.has(sessionId)
  }

  block(sessionId: string, seq: number, firstSample: number, samples: Float32Array, sampleCount: number, receivedAt: number, decide: boolean, reset = false): boolean {
    const slot = this.placement.get(sessionId)
    if (!slot) return false
    // Blocks that arrive in the same turn of the event loop (devices tend to send together)
    // go to the worker as one message: a post and a thread wake-up cost far more than the
    // copy of a 4 KiB block. Copied by structured clone, not transferred (measured cheaper
    // for blocks this size, and the caller keeps its array for the recording).
    slot.pending.push({ sessionId, seq, firstSample, sampleCount, samples, receivedAt, decide, reset })
    if (!slot.flushScheduled) {
      slot.flushScheduled = true
      setImmediate(() => this.flushSlot(slot))
    }
    return true
  }

  private flushSlot(slot: Slot): void {
    slot.flushScheduled = false
    if (slot.pending.length === 0) return
    const blocks = slot.pending
    slot.pending = []
    slot.worker.postMessage({ t: 'blocks', blocks } satisfies ToWorker)
  }

  /** Control messages keep their order with the blocks: pending blocks go first. */
  private control(sessionId: string, message: ToWorker): void {
    const slot = this.placement.get(sessionId)
    if (!slot) return
    this.flushSlot(slot)
    slot.worker.postMessage(message)
  }

  setDecoder(sessionId: string, decoder: Decoder | null): void {
    this.control(sessionId, { t: 'decoder', sessionId, decoder })
  }

  setSettings(sessionId: string, settings: PipelineSettings): void {
    this.control(sessionId, { t: 'settings', sessionId, settings })
  }

  /** Closes the session's pipeline; with `owner`, only if that listener still owns it. */
  close(sessionId: string, owner?: PipelineListener): void {
    const slot = this.placement.get(sessionId)
    if (!slot) return
    if (owner && this.listeners.get(sessionId) !== owner) return
    this.flushSlot(slot)
    slot.worker.postMessage({ t: 'close', sessionId } satisfies ToWorker)
    slot.sessions.delete(sessionId)
    this.placement.delete(sessionId)
    this.listeners.delete(sessionId)
  }

  /** Sessions per worker, for the bench and health figures. */
  layout(): number[] {
    return this.slots.map((s) => s.sessions.size)
  }

  async shutdown(): Promise<void> {
    this.closing = true
    clearInterval(this.displayTimer)
    await Promise.all(this.slots.map((s) => s.worker.terminate()))
  }
}
