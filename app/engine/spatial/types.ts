// One interface for every way Tiller learns (or fixes) the spatial filter W. A fitted result is
// plain data: filters and patterns as component-by-channel arrays, safe to store as JSON.
import type { TrialSet } from '../covariance'

export type SpatialMethodName =
  | 'none'
  | 'car'
  | 'bipolar'
  | 'laplacian-small'
  | 'laplacian-large'
  | 'pca'
  | 'ica'
  | 'csp'
  | 'rcsp'
  | 'csp-ovr'
  | 'fbcsp'

export const SPATIAL_METHODS: SpatialMethodName[] = [
  'none', 'car', 'bipolar', 'laplacian-small', 'laplacian-large', 'pca', 'ica', 'csp', 'rcsp', 'csp-ovr', 'fbcsp',
]

/** Electrode position, any consistent unit (head-centred Cartesian, e.g. from a 10-20 montage). */
export interface ChannelPosition {
  name: string
  x: number
  y: number
  z: number
}

export interface SpatialContext {
  channels: string[]
  classes: string[]
  positions?: ChannelPosition[]
  /** CSP filters from each end of the eigenvalue spectrum (default 3) */
  pairs?: number
  /** filter-bank CSP: the bands and the trial sets filtered to each of them */
  bandTrials?: { band: [number, number]; trials: TrialSet }[]
  /** filter-bank CSP: how many features to select before adding their pair partners (default 4) */
  selectFeatures?: number
  /** PCA / ICA component cap */
  components?: number
  seed?: number
}

export interface FittedSpatial {
  method: SpatialMethodName
  /** W: component × channel */
  filters: number[][]
  /** A (Haufe et al. 2014 forward model): component × channel */
  patterns: number[][]
  componentNames: string[]
  /** filter-bank methods: index into `bands` for each component; otherwise absent (one band) */
  componentBands?: number[]
  bands?: [number, number][]
  /** CSP family: generalized eigenvalue of each kept component */
  eigenvalues?: number[]
  /** regularized CSP: Ledoit-Wolf intensity per class */
  shrinkage?: number[]
}

export interface SpatialMethod {
  name: SpatialMethodName
  kind: 'fixed' | 'unsupervised' | 'supervised'
  /** trials: the training trials (already band-passed); labels: class index per trial */
  fit(trials: TrialSet, labels: number[], ctx: SpatialContext): FittedSpatial
}

export function allIndices(set: TrialSet): number[] {
  return set.outer.map((_, i) => i)
}
