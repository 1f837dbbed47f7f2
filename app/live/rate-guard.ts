// Flood and slowness checks for one device link, against the rate it declared in its hello.
// Time is passed in (milliseconds) so tests can drive it.

export interface RateGuardOptions {
  rateHz: number
  maxFramesPerSecond: number
  frameBurst: number
  maxAheadSeconds: number
  slowWindowMs: number
  slowFraction: number
}

export type RateVerdict = { ok: true } | { ok: false; code: 'flood' | 'ahead'; reason: string }

export class RateGuard {
  private tokens: number
  private lastRefill: number
  private readonly startedAt: number
  private samples = 0
  private windowStart: number
  private windowSamples = 0
  private slowWindows = 0

  constructor(
    private readonly options: RateGuardOptions,
    now: number,
  ) {
    this.tokens = options.frameBurst
    this.lastRefill = now
    this.startedAt = now
    this.windowStart = now
  }

  /** Call for every frame (any kind). */
  frame(now: number): RateVerdict {
    this.tokens = Math.min(this.options.frameBurst, this.tokens + ((now - this.lastRefill) / 1000) * this.options.maxFramesPerSecond)
    this.lastRefill = now
    if (this.tokens < 1) return { ok: false, code: 'flood', reason: `more than ${this.options.maxFramesPerSecond} frames per second` }
    this.tokens -= 1
    return { ok: true }
  }

  /** Call for every accepted block with its new sample count. */
  samplesArrived(count: number, now: number): RateVerdict {
    this.samples += count
    this.windowSamples += count
    const allowed = ((now - this.startedAt) / 1000 + this.options.maxAheadSeconds) * this.options.rateHz
    if (this.samples > allowed) {
      return { ok: false, code: 'ahead', reason: `${this.samples} samples in ${((now - this.startedAt) / 1000).toFixed(1)} s at a declared ${this.options.rateHz} Hz` }
    }
    return { ok: true }
  }

  /**
   * Called on a timer: true when the last full window delivered less than slowFraction of
   * the declared rate twice in a row (one slow window is a hiccup, two are a broken link).
   */
  checkSlow(now: number): { slow: boolean; warn: boolean; rateHz: number } {
    const elapsed = now - this.windowStart
    if (elapsed < this.options.slowWindowMs) return { slow: false, warn: false, rateHz: NaN }
    const rateHz = (this.windowSamples / elapsed) * 1000
    this.windowStart = now
    this.windowSamples = 0
    if (rateHz < this.options.rateHz * this.options.slowFraction) {
      this.slowWindows++
      return { slow: this.slowWindows >= 2, warn: this.slowWindows === 1, rateHz }
    }
    this.slowWindows = 0
    return { slow: false, warn: false, rateHz }
  }
}
