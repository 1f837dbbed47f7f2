// Signal quality per channel from a stretch of the stream: flat line, clipping, mains
// interference (50/60 Hz), excessive variance, drift, and a robust bad-channel flag. The
// thresholds are common practice for scalp EEG in microvolts (amplitudes of tens of µV); the
// exact numbers are our choice and can be overridden.
import { bandPowerOf, welch, type Spectrum } from './spectrum'

export { welch } from './spectrum'
export type { Spectrum, WelchOptions } from './spectrum'

export interface QualityOptions {
  /** mains frequency; default: whichever of 50 and 60 Hz carries more power */
  mainsHz?: 50 | 60
  /** amplifier input range in µV (±); samples at or beyond 99.5 % of it count as clipped */
  rangeUv?: number
  /** below this standard deviation the channel is flat (default 0.5 µV) */
  flatUv?: number
  /** above this standard deviation the channel is too noisy (default 100 µV) */
  maxStdUv?: number
  /** above this |slope| the channel drifts (default 20 µV/s) */
  maxDriftUvPerSecond?: number
  /** mains-to-EEG power ratio above which mains noise is excessive (default 1) */
  maxMainsRatio?: number
  /** clipped fraction above which the channel is bad (default 0.001) */
  maxClippedFraction?: number
  /** robust z-score of log-variance against the other channels above which it is an outlier (default 4) */
  maxVarianceZ?: number
}

export interface ChannelQuality {
  channel: string
  stdUv: number
  varianceUv2: number
  flat: boolean
  clippedFraction: number
  mainsHz: 50 | 60
  /** power within ±2 Hz of mains over power in 1–40 Hz */
  mainsRatio: number
  driftUvPerSecond: number
  /** robust z-score of this channel's log-variance among all channels */
  varianceZ: number
  bad: boolean
  reasons: string[]
}

function slope(x: ArrayLike<number>, rateHz: number): number {
  const n = x.length
  const tMean = (n - 1) / 2
  let xMean = 0
  for (let i = 0; i < n; i++) xMean += x[i]
  xMean /= n
  let num = 0
  let den = 0
  for (let i = 0; i < n; i++) {
    num += (i - tMean) * (x[i] - xMean)
    den += (i - tMean) ** 2
  }
  return den === 0 ? 0 : (num / den) * rateHz
}

function median(values: number[]): number {
  const s = [...values].sort((a, b) => a - b)
  const m = s.length >> 1
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m])
}

/** Quality of each channel over the given samples (channel-major, µV). */
export function channelQuality(channels: string[], data: ArrayLike<number>[], rateHz: number, options: QualityOptions = {}): ChannelQuality[] {
  if (channels.length !== data.length) throw new Error('channel names and data differ in count')
  const flatUv = options.flatUv ?? 0.5
  const maxStd = options.maxStdUv ?? 100
  const maxDrift = options.maxDriftUvPerSecond ?? 20
  const maxMains = options.maxMainsRatio ?? 1
  const maxClip = options.maxClippedFraction ?? 0.001
  const maxZ = options.maxVarianceZ ?? 4
  const rows = data.map((x, c) => {
    const n = x.length
    if (n < 4) throw new Error(`channel ${channels[c]} has too few samples for a quality check`)
    let mean = 0
    for (let i = 0; i < n; i++) mean += x[i]
    mean /= n
    let variance = 0
    let peak = 0
    for (let i = 0; i < n; i++) {
      variance += (x[i] - mean) ** 2
      peak = Math.max(peak, Math.abs(x[i]))
    }
    variance /= n
    // Clipping: at the amplifier range if known, else a plateau at the channel's own extreme.
    const limit = options.rangeUv !== undefined ? 0.995 * options.rangeUv : peak
    let clipped = 0
    for (let i = 0; i < n; i++) if (peak > 0 && Math.abs(x[i]) >= limit) clipped++
    const clippedFraction = options.rangeUv !== undefined || clipped > 2 ? clipped / n : 0
    const spectrum: Spectrum = welch(x, rateHz, { segment: Math.min(n, Math.round(rateHz * 2)) })
    const eeg = bandPowerOf(spectrum, 1, 40) || Number.MIN_VALUE
    const at = (f: number) => (f + 2 < rateHz / 2 ? bandPowerOf(spectrum, f - 2, f + 2) : 0)
    const mainsHz: 50 | 60 = options.mainsHz ?? (at(60) > at(50) ? 60 : 50)
    return {
      channel: channels[c],
      stdUv: Math.sqrt(variance),
      varianceUv2: variance,
      flat: Math.sqrt(variance) < flatUv,
      clippedFraction,
      mainsHz,
      mainsRatio: at(mainsHz) / eeg,
      driftUvPerSecond: slope(x, rateHz),
      varianceZ: 0,
      bad: false,
      reasons: [] as string[],
    }
  })
  // Robust z of log-variance: median and MAD (scaled to σ) over channels that are not flat.
  const logs = rows.filter((r) => !r.flat).map((r) => Math.log(r.varianceUv2))
  const med = logs.length ? median(logs) : 0
  const mad = logs.length ? 1.4826 * median(logs.map((v) => Math.abs(v - med))) : 0
  for (const r of rows) {
    r.varianceZ = r.flat || mad === 0 ? 0 : (Math.log(r.varianceUv2) - med) / mad
    if (r.flat) r.reasons.push(`flat (std ${r.stdUv.toFixed(2)} µV)`)
    if (r.clippedFraction > maxClip) r.reasons.push(`clipping (${(100 * r.clippedFraction).toFixed(2)} % of samples)`)
    if (r.mainsRatio > maxMains) r.reasons.push(`mains ${r.mainsHz} Hz noise (ratio ${r.mainsRatio.toFixed(2)})`)
    if (r.stdUv > maxStd) r.reasons.push(`high amplitude (std ${r.stdUv.toFixed(1)} µV)`)
    if (Math.abs(r.driftUvPerSecond) > maxDrift) r.reasons.push(`drift (${r.driftUvPerSecond.toFixed(1)} µV/s)`)
    if (Math.abs(r.varianceZ) > maxZ) r.reasons.push(`variance unlike the other channels (z ${r.varianceZ.toFixed(1)})`)
    r.bad = r.reasons.length > 0
  }
  return rows
}
