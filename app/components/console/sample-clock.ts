// Maps the device's sample clock to wall-clock milliseconds for the scrolling charts, so the
// EEG, band powers, outputs and cues (all stamped with device sample indices) line up. The
// anchor is set by the first frame and moved only when the device clock and the wall clock
// part by more than `toleranceMs` (a reconnect, a pause, a slow device), never per frame,
// so traces do not jitter.
export class SampleClock {
  private anchorMs: number | null = null
  rateHz: number

  constructor(
    rateHz: number,
    private readonly toleranceMs = 600,
  ) {
    this.rateHz = rateHz
  }

  /** Call with the newest sample index when a frame arrives; returns true if it re-anchored. */
  observe(lastSample: number, nowMs: number): boolean {
    const expected = this.anchorMs === null ? null : this.anchorMs + (lastSample * 1000) / this.rateHz
    if (expected === null || Math.abs(expected - nowMs) > this.toleranceMs) {
      this.anchorMs = nowMs - (lastSample * 1000) / this.rateHz
      return true
    }
    return false
  }

  setRate(rateHz: number): void {
    if (rateHz > 0 && rateHz !== this.rateHz) {
      this.rateHz = rateHz
      this.anchorMs = null
    }
  }

  get ready(): boolean {
    return this.anchorMs !== null
  }

  /** Wall time of a sample; before the first frame, `fallbackMs`. */
  timeOf(sample: number, fallbackMs: number): number {
    return this.anchorMs === null ? fallbackMs : this.anchorMs + (sample * 1000) / this.rateHz
  }
}
