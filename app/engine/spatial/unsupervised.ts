// Unsupervised spatial filters: PCA of the pooled covariance (common practice) and FastICA
// with the log-cosh contrast and symmetric decorrelation (Hyvärinen 1999) on PCA-whitened data.
import type { TrialSet } from '../covariance'
import { pooledCovariance } from '../covariance'
import { eigh, haufePatterns, seededNormal, type Square } from '../linalg'
import type { FittedSpatial, SpatialMethod } from './types'
import { allIndices } from './types'

/** Principal axes of the covariance, largest variance first, dropping null directions. */
function principalAxes(cov: Square, n: number, cap: number): { values: number[]; vectors: number[][] } {
  const e = eigh(cov, n)
  const max = e.values[e.values.length - 1]
  const order = e.values.map((_, i) => n - 1 - i).filter((i) => e.values[i] > max * 1e-9)
  const keep = order.slice(0, Math.min(cap, order.length))
  return { values: keep.map((i) => e.values[i]), vectors: keep.map((i) => e.vectors[i]) }
}

export const pcaMethod: SpatialMethod = {
  name: 'pca',
  kind: 'unsupervised',
  fit: (trials, _labels, ctx) => {
    const n = trials.channels
    const cov = pooledCovariance(trials, allIndices(trials))
    const axes = principalAxes(cov, n, ctx.components ?? n)
    return {
      method: 'pca',
      filters: axes.vectors,
      patterns: haufePatterns(axes.vectors, cov, n),
      componentNames: axes.values.map((v, k) => `pc${k + 1}`),
      eigenvalues: axes.values,
    }
  },
}

/** Default cap on ICA components: keeps FastICA to well under a second per fit. */
export const ICA_DEFAULT_COMPONENTS = 16
/** Samples (pooled over trials) FastICA learns from: enough for 16 components, quick to iterate. */
export const ICA_SAMPLE_BUDGET = 5000

function gatherThinned(trials: TrialSet): { data: Float64Array[]; n: number } {
  if (!trials.thinned || trials.thinned.length === 0) throw new Error('ica needs sample data; build the trial set with thinnedSamples')
  const C = trials.channels
  const n = trials.thinned.reduce((s, t) => s + t.length / C, 0)
  const data = Array.from({ length: C }, () => new Float64Array(n))
  let offset = 0
  for (const t of trials.thinned) {
    const m = t.length / C
    for (let c = 0; c < C; c++) data[c].set(t.subarray(c * m, (c + 1) * m), offset)
    offset += m
  }
  return { data, n }
}

export const icaMethod: SpatialMethod = {
  name: 'ica',
  kind: 'unsupervised',
  fit: (trials, _labels, ctx): FittedSpatial => {
    const C = trials.channels
    const cov = pooledCovariance(trials, allIndices(trials))
    const axes = principalAxes(cov, C, Math.min(ctx.components ?? ICA_DEFAULT_COMPONENTS, C))
    const k = axes.vectors.length
    // Whitening K (k × C): rows v_i / sqrt(λ_i)
    const K = axes.vectors.map((v, i) => v.map((x) => x / Math.sqrt(axes.values[i])))
    const { data, n } = gatherThinned(trials)
    const Z = Array.from({ length: k }, () => new Float64Array(n))
    for (let i = 0; i < k; i++) for (let c = 0; c < C; c++) {
      const f = K[i][c]
      if (f === 0) continue
      const src = data[c]
      const dst = Z[i]
      for (let t = 0; t < n; t++) dst[t] += f * src[t]
    }
    const W = fastIcaSymmetric(Z, k, n, ctx.seed ?? 1)
    // Unmixing in channel space: W K
    const filters = W.map((w) => Array.from({ length: C }, (_, c) => w.reduce((s, wi, i) => s + wi * K[i][c], 0)))
    return {
      method: 'ica',
      filters,
      patterns: haufePatterns(filters, cov, C),
      componentNames: filters.map((_, i) => `ic${i + 1}`),
    }
  },
}

/** Iterations the last FastICA fit took (for tuning and the benchmark). */
export let icaIterations = 0

/** Symmetric FastICA, g = tanh (log-cosh contrast), as sklearn.decomposition.FastICA's default. */
export function fastIcaSymmetric(Z: Float64Array[], k: number, n: number, seed: number, maxIter = 80, tol = 1e-4): number[][] {
  const normal = seededNormal(seed)
  let W = decorrelate(Array.from({ length: k }, () => Array.from({ length: k }, () => normal())))
  const flat = new Float64Array(k * n)
  Z.forEach((z, i) => flat.set(z.subarray(0, n), i * n))
  const y = new Float64Array(n)
  const w = new Float64Array(k)
  const row = new Float64Array(k)
  for (let iter = 0; iter < maxIter; iter++) {
    const next: number[][] = []
    for (let r = 0; r < k; r++) {
      w.set(W[r])
      const gPrimeMean = icaProjectTanh(w, flat, k, n, y)
      icaBackProject(y, flat, k, n, row)
      next.push(Array.from(row, (v, i) => v / n - gPrimeMean * w[i]))
    }
    const Wn = decorrelate(next)
    let limit = 0
    for (let r = 0; r < k; r++) {
      let dot = 0
      for (let i = 0; i < k; i++) dot += Wn[r][i] * W[r][i]
      limit = Math.max(limit, Math.abs(Math.abs(dot) - 1))
    }
    W = Wn
    icaIterations = iter + 1
    if (limit < tol) break
  }
  return W
}

/** y = tanh(w' Z); returns mean(1 - y^2). Kept small so the JIT optimises the loops. */
function icaProjectTanh(w: Float64Array, Z: Float64Array, k: number, n: number, y: Float64Array): number {
  y.fill(0)
  for (let i = 0; i < k; i++) {
    const wi = w[i]
    const base = i * n
    for (let t = 0; t < n; t++) y[t] += wi * Z[base + t]
  }
  let gPrime = 0
  for (let t = 0; t < n; t++) {
    const g = 1 - 2 / (Math.exp(2 * y[t]) + 1) // tanh, faster than Math.tanh in V8
    gPrime += 1 - g * g
    y[t] = g
  }
  return gPrime / n
}

/** row = Z y (sums, not means) */
function icaBackProject(y: Float64Array, Z: Float64Array, k: number, n: number, row: Float64Array): void {
  for (let i = 0; i < k; i++) {
    const base = i * n
    let s = 0
    for (let t = 0; t < n; t++) s += y[t] * Z[base + t]
    row[i] = s
  }
}

/** W <- (W W')^-1/2 W */
function decorrelate(W: number[][]): number[][] {
  const k = W.length
  const G = new Float64Array(k * k)
  for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) G[i * k + j] = W[i].reduce((s, v, t) => s + v * W[j][t], 0)
  const e = eigh(G, k)
  // (W W')^-1/2 = V diag(1/sqrt(d)) V'
  const S = Array.from({ length: k }, (_, i) =>
    Array.from({ length: k }, (_, j) => e.vectors.reduce((s, v, m) => s + (v[i] * v[j]) / Math.sqrt(Math.max(e.values[m], 1e-300)), 0)),
  )
  return S.map((row) => Array.from({ length: k }, (_, t) => row.reduce((s, v, i) => s + v * W[i][t], 0)))
}
