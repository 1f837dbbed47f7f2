// Fixed spatial filters: raw channels, common average reference (McFarland et al. 1997),
// bipolar derivations (common practice) and small/large surface Laplacians from electrode
// neighbours (Hjorth 1975; McFarland et al. 1997). Neighbours come from the montage positions
// passed in, never from a built-in table.
import { haufePatterns } from '../linalg'
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

function positionsFor(ctx: SpatialContext, method: string): { name: string; p: [number, number, number] }[] {
  if (!ctx.positions || ctx.positions.length === 0) {
    throw new Error(`${method} needs electrode positions from the montage; none were given`)
  }
  const byName = new Map(ctx.positions.map((p) => [p.name.toLowerCase(), p]))
  return ctx.channels.map((name) => {
    const pos = byName.get(name.toLowerCase())
    if (!pos) throw new Error(`${method}: no montage position for channel '${name}'`)
    // Project onto the unit sphere so montages in mm, cm or unit radius behave alike.
    const r = Math.hypot(pos.x, pos.y, pos.z) || 1
    return { name, p: [pos.x / r, pos.y / r, pos.z / r] as [number, number, number] }
  })
}

function distanceMatrix(pts: { p: [number, number, number] }[]): number[][] {
  return pts.map((a) => pts.map((b) => Math.hypot(a.p[0] - b.p[0], a.p[1] - b.p[1], a.p[2] - b.p[2])))
}

function median(values: number[]): number {
  const s = [...values].sort((a, b) => a - b)
  return s.length % 2 ? s[(s.length - 1) / 2] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2])
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

/** Each channel minus its nearest neighbour; each unordered pair once. */
export const bipolarMethod: SpatialMethod = {
  name: 'bipolar',
  kind: 'fixed',
  fit: (trials, _labels, ctx) => {
    const pts = positionsFor(ctx, 'bipolar')
    const d = distanceMatrix(pts)
    const n = pts.length
    const seen = new Set<string>()
    const filters: number[][] = []
    const names: string[] = []
    for (let i = 0; i < n; i++) {
      let j = -1
      for (let k = 0; k < n; k++) if (k !== i && (j < 0 || d[i][k] < d[i][j])) j = k
      if (j < 0) continue
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
 * Surface Laplacian: V_i - Σ g_ij V_j with g_ij ∝ 1/d_ij over the neighbour set (McFarland et
 * al. 1997). Small: the nearest ring (within 1.5× the montage's typical neighbour spacing);
 * large: the next ring (1.5–2.6× that spacing), the 10-20 neighbours of a 10-10 cap. Up to four
 * neighbours, closest first. A channel without neighbours at that distance stays raw.
 */
function laplacian(size: 'small' | 'large'): SpatialMethod {
  const name: SpatialMethodName = size === 'small' ? 'laplacian-small' : 'laplacian-large'
  return {
    name,
    kind: 'fixed',
    fit: (trials, _labels, ctx) => {
      const pts = positionsFor(ctx, name)
      const d = distanceMatrix(pts)
      const n = pts.length
      if (n < 3) throw new Error(`${name} needs at least three channels`)
      const spacing = median(d.map((row, i) => Math.min(...row.filter((_, j) => j !== i))))
      const [lo, hi] = size === 'small' ? [0, 1.5 * spacing] : [1.5 * spacing, 2.6 * spacing]
      const filters = d.map((row, i) => {
        const neighbours = row
          .map((dist, j) => ({ j, dist }))
          .filter(({ j, dist }) => j !== i && dist > lo && dist <= hi)
          .sort((a, b) => a.dist - b.dist)
          .slice(0, 4)
        const out = new Array<number>(n).fill(0)
        out[i] = 1
        const total = neighbours.reduce((s, nb) => s + 1 / nb.dist, 0)
        for (const nb of neighbours) out[nb.j] -= 1 / nb.dist / total
        return out
      })
      return finish(name, filters, ctx.channels.map((c) => `${c}-lap`), trials)
    },
  }
}

export const laplacianSmallMethod = laplacian('small')
export const laplacianLargeMethod = laplacian('large')
