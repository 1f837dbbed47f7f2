// The registry of spatial-filter methods and the one way to apply a fitted filter to a block.
import { cspMethod, cspOvrMethod, rcspMethod } from './csp'
import { fbcspMethod } from './fbcsp'
import { bipolarMethod, carMethod, laplacianLargeMethod, laplacianSmallMethod, noneMethod } from './fixed'
import type { FittedSpatial, SpatialMethod, SpatialMethodName } from './types'
import { icaMethod, pcaMethod } from './unsupervised'

export * from './types'

const METHODS: Record<SpatialMethodName, SpatialMethod> = {
  none: noneMethod,
  car: carMethod,
  bipolar: bipolarMethod,
  'laplacian-small': laplacianSmallMethod,
  'laplacian-large': laplacianLargeMethod,
  pca: pcaMethod,
  ica: icaMethod,
  csp: cspMethod,
  rcsp: rcspMethod,
  'csp-ovr': cspOvrMethod,
  fbcsp: fbcspMethod,
}

export function getSpatialMethod(name: string): SpatialMethod {
  const m = (METHODS as Record<string, SpatialMethod>)[name]
  if (!m) throw new Error(`unknown spatial method '${name}'; choose one of ${Object.keys(METHODS).join(', ')}`)
  return m
}

/**
 * Applies W to an interleaved block (block[s * channels + c]) into out[s * components + k].
 * No allocation.
 */
export function applySpatialFilter(fitted: Pick<FittedSpatial, 'filters'>, block: ArrayLike<number>, sampleCount: number, out: Float64Array): Float64Array {
  const K = fitted.filters.length
  const C = K === 0 ? 0 : fitted.filters[0].length
  for (let s = 0; s < sampleCount; s++) {
    for (let k = 0; k < K; k++) {
      const w = fitted.filters[k]
      let acc = 0
      for (let c = 0; c < C; c++) acc += w[c] * block[s * C + c]
      out[s * K + k] = acc
    }
  }
  return out
}
