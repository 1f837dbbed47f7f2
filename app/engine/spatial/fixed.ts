// Fixed spatial filters: raw channels, common average reference (McFarland et al. 1997),
// bipolar derivations (common practice) and small/large surface Laplacians from electrode
// neighbours (Hjorth 1975; McFarland et al. 1997). Neighbours are found by the montage module
// from the positions passed in, never from a built-in table.
import { haufePatterns } from '../linalg'
import { angularDistance, laplacianNeighbours, nearestNeighbours } from '../montage'
import { pooledCovariance } from '../covariance'
import type { ChannelPosition, FittedSpatial, SpatialContext, SpatialMethod, SpatialMethodName } from './types'
import { allIndices } from './types'

function identity(n: number): number[][] {
  return Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0)))
}

function finish(method: SpatialMethodName, filters: number[][], names: string[], trials: Parameters<SpatialMethod['fit']>[0]): FittedSpatial {
  const cov = pooledCovariance(trials, allIndices(trials))
  return { method, filters, patterns: haufePatterns(filters, cov, trials.channels), componentNames: names }
}

/** Montage positions in channel order (names matched case-insensitively). */
function positionsFor(ctx: SpatialContext, method: string): ChannelPosition[] {
  if (!ctx.positions || ctx.positions.length === 0) {
    throw new Error(`${method} needs electrode positions from the montage; none were given`)
  }
  const byName = new Map(ctx.positions.map((p) => [p.name.toLowerCase(), p]))
  return ctx.channels.map((name) => {
    const pos = byName.get(name.toLowerCase())
    if (!pos) throw new Error(`${method}: no montage position for channel '${name}'`)
    return { name, x: pos.x, y: pos.y, z: pos.z }
  })
}

export const noneMethod: SpatialMethod = {
  name: 'none',
  kind: 'fixed',
  fit: (trials, _labels, ctx) => finish('none', identity(trials.channels), [...ctx.channels], trials),
}

export const carMethod: SpatialMethod = {
  name: 'car',
  kind: 'fixed',
  fit: (trials, _labels, ctx) => {
    const n = trials.channels
    const filters = identity(n).map((row) => row.map((v) => v - 1 / n))
    return finish('car', filters, ctx.channels.map((c) => `${c}-avg`), trials)
  },
}

/** Each channel minus its nearest neighbour on the scalp; each unordered pair once. */
export const bipolarMethod: SpatialMethod = {
  name: 'bipolar',
  kind: 'fixed',
  fit: (trials, _labels, ctx) => {
    const pts = positionsFor(ctx, 'bipolar')
    const n = pts.length
    const nearest = nearestNeighbours(pts, 1)
    const seen = new Set<string>()
    const filters: number[][] = []
    const names: string[] = []
    for (let i = 0; i < n; i++) {
      const j = nearest[i][0]
      if (j === undefined) continue
      const key = i < j ? `${i}:${j}` : `${j}:${i}`
      if (seen.has(key)) continue
      seen.add(key)
      const row = new Array<number>(n).fill(0)
      row[i] = 1
      row[j] = -1
      filters.push(row)
      names.push(`${pts[i].name}-${pts[j].name}`)
    }
    if (filters.length === 0) throw new Error('bipolar needs at least two channels')
    return finish('bipolar', filters, names, trials)
  },
}

/**
 * Surface Laplacian: V_i - Σ g_ij V_j with g_ij ∝ 1/d_ij over the neighbour ring the montage
 * module finds (small: nearest ring; large: the next ring, McFarland et al. 1997). A channel
 * without neighbours stays raw.
 */
function laplacian(size: 'small' | 'large'): SpatialMethod {
  const name: SpatialMethodName = size === 'small' ? 'laplacian-small' : 'laplacian-large'
  return {
    name,
    kind: 'fixed',
    fit: (trials, _labels, ctx) => {
      const pts = positionsFor(ctx, name)
      const n = pts.length
      if (n < 3) throw new Error(`${name} needs at least three channels`)
      const rings = laplacianNeighbours(pts, size)
      const filters = rings.map((ring, i) => {
        const out = new Array<number>(n).fill(0)
        out[i] = 1
        const inv = ring.map((j) => 1 / Math.max(angularDistance(pts[i], pts[j]), 1e-9))
        const total = inv.reduce((a, b) => a + b, 0)
        ring.forEach((j, k) => (out[j] -= inv[k] / total))
        return out
      })
      return finish(name, filters, ctx.channels.map((c) => `${c}-lap`), trials)
    },
  }
}

export const laplacianSmallMethod = laplacian('small')
export const laplacianLargeMethod = laplacian('large')
