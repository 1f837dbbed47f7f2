// One session's online processing, hosted inside a decoding worker: the active decoder (engine
// online path), a display band-pass when no decoder is active, display decimation and
// per-channel signal-quality figures. Holds its own state; one instance per live session.
import type { Decoder } from '../engine/decoder.ts'
import { createFilterState, designBandpass, packSos, sosFilterInto, type FilterState } from '../engine/filters.ts'
import { createOnlineDecoder, type OnlineDecoder } from '../engine/online.ts'
import type { FromWorker, PipelineSettings, WorkerDecision } from './pipeline-messages.ts'

type DisplayMessage = Extract<FromWorker, { t: 'display' }>

export class SessionPipeline {
  private online: OnlineDecoder | null = null
  private readonly channelCount: number
  private readonly displayPacked: Float64Array | null
  private readonly displayState: FilterState | null
  private displayScratch = new Float64Array(0)
  private readonly decimate: number
  private readonly displayRateHz: number
  // Display accumulation (boxcar mean over `decimate` samples, a simple anti-alias).
  private accRaw: Float64Array
  private accFiltered: Float64Array
  private accCount = 0
  private rawPoints: number[][]
  private filteredPoints: number[][]
  private displayFirstSample = -1
  private nextSample = 0
  // Quality over the last second: sum and sum of squares per channel.
  private qSum: Float64Array
  private qSq: Float64Array
  private qCount = 0
  private lastQuality: number[] | null = null
  private lastBandPower: { sample: number; values: number[] } | null = null
  private samplesSinceDecision = 0
  private control = 0

  constructor(
    readonly sessionId: string,
    private readonly channels: string[],
    private readonly rateHz: number,
    displayBand: [number, number],
    displayRateHz: number,
    private settings: PipelineSettings,
  ) {
    this.channelCount = channels.length
    const C = this.channelCount
    const high = Math.min(displayBand[1], rateHz * 0.45)
    if (displayBand[0] > 0 && high > displayBand[0]) {
      const sos = designBandpass({ lowHz: displayBand[0], highHz: high, order: 2, rateHz })
      this.displayPacked = packSos(sos)
      this.displayState = createFilterState(sos, C)
    } else {
      this.displayPacked = null
      this.displayState = null
    }
    this.decimate = Math.max(1, Math.round(rateHz / displayRateHz))
    this.displayRateHz = rateHz / this.decimate
    this.accRaw = new Float64Array(C)
    this.accFiltered = new Float64Array(C)
    this.rawPoints = channels.map(() => [])
    this.filteredPoints = channels.map(() => [])
    this.qSum = new Float64Array(C)
    this.qSq = new Float64Array(C)
  }

  setDecoder(decoder: Decoder | null): void {
    if (!decoder) {
      this.online = null
      return
    }
    if (decoder.rateHz !== this.rateHz) throw new Error(`decoder was trained at ${decoder.rateHz} Hz, the device streams at ${this.rateHz} Hz`)
    if (decoder.channels.length !== this.channelCount || decoder.channels.some((c, i) => c !== this.channels[i])) {
      throw new Error('decoder channels differ from the device link channels')
    }
    this.online = createOnlineDecoder(decoder)
    this.samplesSinceDecision = 0
    this.control = 0
  }

  /** Back to rest: filter state, window and control signal, as a fresh decoder on the run's first sample. */
  resetDecoder(): void {
    this.online?.reset()
    this.samplesSinceDecision = 0
    this.control = 0
  }

  setSettings(settings: PipelineSettings): void {
    this.settings = settings
    this.control = 0
  }

  /** Processes one block; returns a decision if one is due. */
  push(firstSample: number, samples: Float32Array, sampleCount: number, decide: boolean): WorkerDecision | null {
    const C = this.channelCount
    let filtered: ArrayLike<number> | null = null
    let decision: WorkerDecision | null = null
    if (this.online) {
      const out = this.online.push(samples, sampleCount)
      filtered = out.filtered
      this.samplesSinceDecision += sampleCount
      const dueSamples = (this.settings.decisionEveryMs * this.rateHz) / 1000
      if (out.ready) {
        this.lastBandPower = { sample: firstSample + sampleCount - 1, values: Array.from(out.bandPower) }
        if (decide && this.samplesSinceDecision >= dueSamples) {
          this.samplesSinceDecision = 0
          const classes = this.online.decoder.classes
          const rawControl = classes.length === 2 ? Math.tanh(out.output / 2) : 2 * out.probability - 1
          const a = Math.min(Math.max(this.settings.smoothing, 0), 0.99)
          this.control = a * this.control + (1 - a) * rawControl
          decision = { output: out.output, control: this.control, probability: out.probability, classIndex: out.classIndex, className: out.className }
        }
      }
    } else if (this.displayPacked && this.displayState) {
      if (this.displayScratch.length < sampleCount * C) this.displayScratch = new Float64Array(sampleCount * C * 2)
      sosFilterInto(this.displayPacked, samples, this.displayScratch, sampleCount, this.displayState)
      filtered = this.displayScratch
    }
    this.accumulateDisplay(firstSample, samples, filtered, sampleCount)
    return decision
  }

  private accumulateDisplay(firstSample: number, samples: Float32Array, filtered: ArrayLike<number> | null, sampleCount: number): void {
    const C = this.channelCount
    if (this.displayFirstSample < 0 || firstSample !== this.nextSample) {
      // First block or a discontinuity: the display restarts at this block (display only; the
      // recording keeps every sample).
      this.accCount = 0
      this.accRaw.fill(0)
      this.accFiltered.fill(0)
      this.rawPoints = this.channels.map(() => [])
      this.filteredPoints = this.channels.map(() => [])
      this.displayFirstSample = firstSample
    }
    this.nextSample = firstSample + sampleCount
    for (let s = 0; s < sampleCount; s++) {
      const base = s * C
      for (let c = 0; c < C; c++) {
        const v = samples[base + c]
        this.accRaw[c] += v
        if (filtered) this.accFiltered[c] += filtered[base + c]
        this.qSum[c] += v
        this.qSq[c] += v * v
      }
      this.qCount++
      if (++this.accCount === this.decimate) {
        for (let c = 0; c < C; c++) {
          this.rawPoints[c].push(round2(this.accRaw[c] / this.decimate))
          this.filteredPoints[c].push(round2(this.accFiltered[c] / this.decimate))
        }
        this.accCount = 0
        this.accRaw.fill(0)
        this.accFiltered.fill(0)
      }
    }
    if (this.qCount >= this.rateHz) {
      const rms: number[] = []
      for (let c = 0; c < C; c++) {
        const mean = this.qSum[c] / this.qCount
        rms.push(round2(Math.sqrt(Math.max(0, this.qSq[c] / this.qCount - mean * mean))))
      }
      this.lastQuality = rms
      this.qSum.fill(0)
      this.qSq.fill(0)
      this.qCount = 0
    }
  }

  /** The display frame gathered since the last call, or null if there is nothing new. */
  takeDisplay(): DisplayMessage | null {
    if (this.rawPoints[0].length === 0 && !this.lastQuality) return null
    const signal =
      this.rawPoints[0].length > 0
        ? JSON.stringify({
            firstSample: this.displayFirstSample,
            displayRateHz: this.displayRateHz,
            raw: this.rawPoints,
            filtered: this.online || this.displayPacked ? this.filteredPoints : null,
          })
        : null
    const msg: DisplayMessage = {
      t: 'display',
      sessionId: this.sessionId,
      signalJson: signal,
      bandPower: this.lastBandPower && this.online ? { ...this.lastBandPower, components: this.online.decoder.componentNames } : null,
      quality: this.lastQuality ? { rmsUv: this.lastQuality } : null,
    }
    this.rawPoints = this.channels.map(() => [])
    this.filteredPoints = this.channels.map(() => [])
    this.displayFirstSample = this.nextSample - this.accCount
    this.lastQuality = null
    this.lastBandPower = null
    return msg
  }
}

function round2(v: number): number {
  return Math.round(v * 100) / 100
}
