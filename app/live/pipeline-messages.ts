// Messages between the main thread and a decoding worker. Plain structured-clone data; sample
// buffers are transferred, not copied.
import type { Decoder } from '../engine/decoder.ts'

export interface PipelineSettings {
  /** 0: a decision per block; otherwise at most one every N milliseconds of signal. */
  decisionEveryMs: number
  /** Exponential smoothing of the control signal: 0 = none, 0.9 = heavy. */
  smoothing: number
}

export type ToWorker =
  | {
      t: 'open'
      sessionId: string
      channels: string[]
      rateHz: number
      /** Band of the display filter when no decoder is active. */
      displayBand: [number, number]
      displayRateHz: number
      decoder: Decoder | null
      settings: PipelineSettings
    }
  | { t: 'decoder'; sessionId: string; decoder: Decoder | null }
  | { t: 'settings'; sessionId: string; settings: PipelineSettings }
  /** Blocks of any sessions on this worker that arrived in the same turn of the event loop. */
  | { t: 'blocks'; blocks: BlockMessage[] }
  | { t: 'close'; sessionId: string }
  | { t: 'display-tick' }

export interface BlockMessage {
  sessionId: string
  seq: number
  firstSample: number
  sampleCount: number
  samples: Float32Array
  /** Main-thread time the block arrived; echoed back untouched. */
  receivedAt: number
  decide: boolean
  /** First block of a run: the decoder starts from rest, so a replay of the run's recording gives the same numbers. */
  reset: boolean
}

export interface ResultMessage {
  sessionId: string
  seq: number
  /** Last sample index used by this block (device clock). */
  lastSample: number
  receivedAt: number
  decision: WorkerDecision | null
  computeUs: number
}

export interface WorkerDecision {
  output: number
  control: number
  probability: number
  classIndex: number
  className: string
}

export type FromWorker =
  | { t: 'results'; results: ResultMessage[] }
  | {
      t: 'display'
      sessionId: string
      /** The SignalEvent payload, serialised in the worker so the main thread only forwards it; null if no new samples. */
      signalJson: string | null
      bandPower: { sample: number; components: string[]; values: number[] } | null
      quality: { rmsUv: number[] } | null
    }
  | { t: 'error'; sessionId: string; message: string }
  | { t: 'ready' }
