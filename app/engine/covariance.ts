// Covariance estimates the spatial filters and the classifier learn from. Trials keep their
// second-moment sums (and, when regularized CSP asks, fourth-moment sums) so cross-validation
// folds combine them without touching samples again. Covariances here are uncentered
// (X X' / n): band-passed EEG has zero mean, and this is the band power the online path
// measures, as mne.decoding.CSP's 'empirical' estimate (assume_centered=True) does too.
import type { Square } from './linalg'

export interface TrialSet {
  channels: number
  /** per trial: Σ_t x_t x_t' (row-major channels×channels), not divided by the sample count */
  outer: Float64Array[]
  /** per trial: number of samples */
  samples: number[]
  /** per trial: Σ_t (x_t∘x_t)(x_t∘x_t)', only if requested (Ledoit-Wolf needs it) */
  fourth?: Float64Array[]
  /** per trial: a thinned copy of the samples, channel-major (channels × m), only if requested (ICA) */
  thinned?: Float64Array[]
}

export interface TrialSetOptions {
  fourth?: boolean
  /** keep up to this many samples per trial for methods that need samples (ICA) */
  thinnedSamples?: number
}

/** Builds a TrialSet from channel-major epochs: epoch[channel * samples + t]. */
export function createTrialSet(epochs: Float64Array[], channels: number, samplesPerTrial: number, options: TrialSetOptions = {}): TrialSet {
  const set: TrialSet = { channels, outer: [], samples: [] }
  if (options.fourth) set.fourth = []
  if (options.thinnedSamples) set.thinned = []
  for (const e of epochs) addTrial(set, e, samplesPerTrial, options)
  return set
}

export function addTrial(set: TrialSet, epoch: Float64Array, n: number, options: TrialSetOptions = {}): void {
  const C = set.channels
  if (epoch.length !== C * n) throw new Error(`epoch has ${epoch.length} values, expected ${C}×${n}`)
  const outer = new Float64Array(C * C)
  for (let i = 0; i < C; i++) {
    const xi = i * n
    for (let j = 0; j <= i; j++) {
      const xj = j * n
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0
      let t = 0
      for (; t + 3 < n; t += 4) {
        s0 += epoch[xi + t] * epoch[xj + t]
        s1 += epoch[xi + t + 1] * epoch[xj + t + 1]
        s2 += epoch[xi + t + 2] * epoch[xj + t + 2]
        s3 += epoch[xi + t + 3] * epoch[xj + t + 3]
      }
      for (; t < n; t++) s0 += epoch[xi + t] * epoch[xj + t]
      const s = s0 + s1 + s2 + s3
      outer[i * C + j] = s
      outer[j * C + i] = s
    }
  }
  set.outer.push(outer)
  set.samples.push(n)
  if (options.fourth) {
    const q = new Float64Array(C * C)
    const sq = new Float64Array(C * n)
    for (let i = 0; i < C * n; i++) sq[i] = epoch[i] * epoch[i]
    for (let i = 0; i < C; i++) for (let j = 0; j <= i; j++) {
      let s = 0
      for (let t = 0; t < n; t++) s += sq[i * n + t] * sq[j * n + t]
      q[i * C + j] = s
      q[j * C + i] = s
    }
    set.fourth!.push(q)
  }
  if (options.thinnedSamples) {
    const m = Math.min(n, options.thinnedSamples)
    const stride = n / m
    const thin = new Float64Array(C * m)
    for (let c = 0; c < C; c++) for (let k = 0; k < m; k++) thin[c * m + k] = epoch[c * n + Math.floor(k * stride)]
    set.thinned!.push(thin)
  }
}

/** Trial covariance X X' / n of trial i. */
export function trialCovariance(set: TrialSet, i: number): Square {
  const n = set.samples[i]
  return set.outer[i].map((v) => v / n)
}

/** Covariance of the concatenated trials (mne.decoding.CSP cov_est='concat', 'empirical'). */
export function pooledCovariance(set: TrialSet, indices: number[]): Square {
  const C = set.channels
  const out = new Float64Array(C * C)
  let n = 0
  for (const i of indices) {
    const o = set.outer[i]
    for (let k = 0; k < o.length; k++) out[k] += o[k]
    n += set.samples[i]
  }
  if (n === 0) throw new Error('no trials for a covariance estimate')
  for (let k = 0; k < out.length; k++) out[k] /= n
  return out
}

/**
 * Ledoit-Wolf shrinkage intensity for centred data from its moment sums, the estimator of
 * sklearn.covariance.ledoit_wolf_shrinkage (assume_centered=True) (Ledoit & Wolf 2004).
 * outer = Σ x x', fourth = Σ (x∘x)(x∘x)', n samples, p features.
 */
export function ledoitWolfIntensity(outer: ArrayLike<number>, fourth: ArrayLike<number>, n: number, p: number): number {
  let trace = 0
  for (let i = 0; i < p; i++) trace += outer[i * p + i] / n
  const mu = trace / p
  let betaSum = 0
  let deltaSum = 0
  for (let k = 0; k < p * p; k++) {
    betaSum += fourth[k]
    deltaSum += outer[k] * outer[k]
  }
  deltaSum /= n * n
  let beta = (1 / (p * n)) * (betaSum / n - deltaSum)
  let delta = deltaSum - 2 * mu * trace + p * mu * mu
  delta /= p
  beta = Math.min(beta, delta)
  return beta === 0 ? 0 : beta / delta
}

/** (1 - s) S + s (tr S / p) I */
export function shrink(cov: Square, p: number, intensity: number): Square {
  let trace = 0
  for (let i = 0; i < p; i++) trace += cov[i * p + i]
  const mu = trace / p
  const out = cov.map((v) => (1 - intensity) * v)
  for (let i = 0; i < p; i++) out[i * p + i] += intensity * mu
  return out
}

/** Ledoit-Wolf shrunk covariance of pooled trials (uncentered, as assume_centered=True). */
export function shrunkPooledCovariance(set: TrialSet, indices: number[]): { covariance: Square; intensity: number } {
  if (!set.fourth) throw new Error('internal: trial set was built without fourth moments')
  const p = set.channels
  const outer = new Float64Array(p * p)
  const fourth = new Float64Array(p * p)
  let n = 0
  for (const i of indices) {
    for (let k = 0; k < p * p; k++) {
      outer[k] += set.outer[i][k]
      fourth[k] += set.fourth[i][k]
    }
    n += set.samples[i]
  }
  const intensity = ledoitWolfIntensity(outer, fourth, n, p)
  return { covariance: shrink(outer.map((v) => v / n), p, intensity), intensity }
}

/**
 * sklearn.covariance.ledoit_wolf on sample rows (n × p) with assume_centered=false: centres the
 * data, divides by n, returns the shrunk covariance and the intensity.
 */
export function ledoitWolf(rows: ArrayLike<number>[], assumeCentered = false): { covariance: Square; intensity: number } {
  const n = rows.length
  const p = rows[0].length
  const mean = new Float64Array(p)
  if (!assumeCentered) {
    for (const r of rows) for (let j = 0; j < p; j++) mean[j] += r[j] / n
  }
  const outer = new Float64Array(p * p)
  const fourth = new Float64Array(p * p)
  const x = new Float64Array(p)
  for (const r of rows) {
    for (let j = 0; j < p; j++) x[j] = r[j] - mean[j]
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) {
      outer[i * p + j] += x[i] * x[j]
      fourth[i * p + j] += x[i] * x[i] * x[j] * x[j]
    }
  }
  const intensity = p === 1 ? 0 : ledoitWolfIntensity(outer, fourth, n, p)
  return { covariance: shrink(outer.map((v) => v / n), p, intensity), intensity }
}
