// Filter-bank CSP (Ang et al. 2008, 2012): CSP in each band of a filter bank, then the
// features with the highest mutual information with the class (MIBIF, Parzen-window estimate)
// are kept together with their CSP pair partners. Everything is learnt from training trials.
import { pooledCovariance } from '../covariance'
import { haufePatterns, quadForm } from '../linalg'
import { cspMethod, fitCspOvr } from './csp'
import type { FittedSpatial, SpatialMethod } from './types'
import { allIndices } from './types'

export const DEFAULT_FILTER_BANK: [number, number][] = [
  [4, 8], [8, 12], [12, 16], [16, 20], [20, 24], [24, 28], [28, 32], [32, 36], [36, 40],
]

/** Mutual information (bits) between one feature and the class, Parzen estimate (Ang et al. 2012). */
export function mutualInformation(feature: number[], labels: number[], classCount: number): number {
  const n = feature.length
  const mean = feature.reduce((s, v) => s + v, 0) / n
  const sd = Math.sqrt(feature.reduce((s, v) => s + (v - mean) ** 2, 0) / Math.max(1, n - 1)) || 1
  const h = Math.pow(4 / (3 * n), 0.2) * sd
  const counts = new Array<number>(classCount).fill(0)
  for (const l of labels) counts[l]++
  let hClass = 0
  for (const c of counts) if (c > 0) hClass -= (c / n) * Math.log2(c / n)
  let hConditional = 0
  const joint = new Array<number>(classCount)
  for (let i = 0; i < n; i++) {
    joint.fill(0)
    for (let j = 0; j < n; j++) {
      const u = (feature[i] - feature[j]) / h
      joint[labels[j]] += Math.exp(-0.5 * u * u)
    }
    // p(f_i | ω) P(ω) ∝ (Σ_j∈ω φ) / n_ω * n_ω / n  -> Σ_j∈ω φ / n
    const total = joint.reduce((s, v) => s + v, 0)
    for (let k = 0; k < classCount; k++) {
      const p = joint[k] / total
      if (p > 0) hConditional -= (p * Math.log2(p)) / n
    }
  }
  return hClass - hConditional
}

export const fbcspMethod: SpatialMethod = {
  name: 'fbcsp',
  kind: 'supervised',
  fit: (_trials, labels, ctx): FittedSpatial => {
    const bank = ctx.bandTrials
    if (!bank || bank.length === 0) throw new Error('fbcsp needs trials filtered to each band of the filter bank')
    const pairs = ctx.pairs ?? 2
    const K = ctx.classes.length
    const C = bank[0].trials.channels
    // Candidate components: all bands' CSP filters, with their pair partner and band.
    const cands: { band: number; filter: number[]; partner: number; feature: number[] }[] = []
    bank.forEach(({ trials }, b) => {
      const sub = { ...ctx, pairs }
      const fitted = K === 2 ? cspMethod.fit(trials, labels, sub) : fitCspOvr(trials, labels, sub)
      const block = 2 * Math.min(pairs, Math.floor(C / 2))
      const base = cands.length
      fitted.filters.forEach((w, i) => {
        const within = i % block
        const partner = base + i - within + (block - 1 - within)
        const feature = trials.outer.map((o, t) => Math.log(Math.max(quadForm(w, o, C) / trials.samples[t], 1e-300)))
        cands.push({ band: b, filter: w, partner, feature })
      })
    })
    const mi = cands.map((c) => mutualInformation(c.feature, labels, K))
    const ranked = mi.map((_, i) => i).sort((a, b) => mi[b] - mi[a] || a - b)
    const chosen = new Set<number>()
    for (const i of ranked.slice(0, Math.min(ctx.selectFeatures ?? 4, ranked.length))) {
      chosen.add(i)
      chosen.add(cands[i].partner)
    }
    const picks = [...chosen].sort((a, b) => a - b)
    const filters = picks.map((i) => cands[i].filter)
    const patterns = picks.map((i) => {
      const { trials } = bank[cands[i].band]
      return haufePatterns([cands[i].filter], pooledCovariance(trials, allIndices(trials)), C)[0]
    })
    return {
      method: 'fbcsp',
      filters,
      patterns,
      componentNames: picks.map((i) => `${bank[cands[i].band].band[0]}-${bank[cands[i].band].band[1]} Hz csp (MI ${mi[i].toFixed(3)})`),
      componentBands: picks.map((i) => cands[i].band),
      bands: bank.map((b) => b.band),
    }
  },
}
