// Common spatial patterns: the generalized eigenvalue problem of the class covariances
// C_a v = λ (C_a + C_b) v (Ramoser, Müller-Gerking & Pfurtscheller 2000; Blankertz et al. 2008),
// m filters from each end of the spectrum. Regularized CSP shrinks each class covariance
// with the analytic Ledoit-Wolf intensity (Ledoit & Wolf 2004; Lotte & Guan 2011). Multi-class
// CSP takes m pairs per class, each class against the rest (common practice).
import type { TrialSet } from '../covariance'
import { pooledCovariance, shrunkPooledCovariance } from '../covariance'
import { eighGeneralized, haufePatterns, type Square } from '../linalg'
import type { FittedSpatial, SpatialContext, SpatialMethod, SpatialMethodName } from './types'
import { allIndices } from './types'

export interface CspSolution {
  /** all generalized eigenvalues, ascending (scipy.linalg.eigh order) */
  values: number[]
  /** eigenvectors in the same order, normalised v'(C_a + C_b)v = 1 */
  vectors: number[][]
}

export function solveCsp(covA: Square, covB: Square, n: number): CspSolution {
  const sum = covA.map((v, i) => v + covB[i])
  return eighGeneralized(covA, sum, n)
}

/** Indices of m components from each end, largest eigenvalue first, smallest last. */
export function pickEnds(count: number, pairs: number): number[] {
  const m = Math.min(pairs, Math.floor(count / 2))
  const top = Array.from({ length: m }, (_, k) => count - 1 - k)
  const bottom = Array.from({ length: m }, (_, k) => m - 1 - k)
  return [...top, ...bottom]
}

function classIndices(labels: number[], k: number): number[] {
  return labels.flatMap((l, i) => (l === k ? [i] : []))
}

function classCovariance(trials: TrialSet, indices: number[], regularize: boolean): { cov: Square; intensity?: number } {
  if (indices.length === 0) throw new Error('a class has no training trials')
  if (!regularize) return { cov: pooledCovariance(trials, indices) }
  const { covariance, intensity } = shrunkPooledCovariance(trials, indices)
  return { cov: covariance, intensity }
}

function twoClass(name: SpatialMethodName, regularize: boolean): SpatialMethod {
  return {
    name,
    kind: 'supervised',
    fit: (trials, labels, ctx) => {
      if (ctx.classes.length !== 2) throw new Error(`${name} separates two classes; use csp-ovr for ${ctx.classes.length}`)
      const n = trials.channels
      const a = classCovariance(trials, classIndices(labels, 0), regularize)
      const b = classCovariance(trials, classIndices(labels, 1), regularize)
      const sol = solveCsp(a.cov, b.cov, n)
      const picks = pickEnds(n, ctx.pairs ?? 3)
      const filters = picks.map((i) => sol.vectors[i])
      const fitted: FittedSpatial = {
        method: name,
        filters,
        patterns: haufePatterns(filters, pooledCovariance(trials, allIndices(trials)), n),
        componentNames: picks.map((i, k) => `${name}${k + 1} (λ=${sol.values[i].toFixed(3)})`),
        eigenvalues: picks.map((i) => sol.values[i]),
      }
      if (regularize) fitted.shrinkage = [a.intensity!, b.intensity!]
      return fitted
    },
  }
}

export const cspMethod = twoClass('csp', false)
export const rcspMethod = twoClass('rcsp', true)

/** One-versus-rest CSP: for each class, m pairs against the pooled other classes. */
export function fitCspOvr(trials: TrialSet, labels: number[], ctx: SpatialContext, name: SpatialMethodName = 'csp-ovr'): FittedSpatial {
  const n = trials.channels
  const K = ctx.classes.length
  const filters: number[][] = []
  const names: string[] = []
  const values: number[] = []
  // With two classes "0 vs rest" already is the whole problem; the second would repeat it.
  const classesToFit = K === 2 ? 1 : K
  for (let k = 0; k < classesToFit; k++) {
    const mine = classIndices(labels, k)
    const rest = labels.flatMap((l, i) => (l !== k ? [i] : []))
    const sol = solveCsp(pooledCovariance(trials, mine), pooledCovariance(trials, rest), n)
    for (const i of pickEnds(n, ctx.pairs ?? 3)) {
      filters.push(sol.vectors[i])
      values.push(sol.values[i])
      names.push(`${ctx.classes[k]}-vs-rest λ=${sol.values[i].toFixed(3)}`)
    }
  }
  return {
    method: name,
    filters,
    patterns: haufePatterns(filters, pooledCovariance(trials, allIndices(trials)), n),
    componentNames: names,
    eigenvalues: values,
  }
}

export const cspOvrMethod: SpatialMethod = { name: 'csp-ovr', kind: 'supervised', fit: (t, l, c) => fitCspOvr(t, l, c) }
