// Spherical-spline interpolation of values measured at electrodes over the whole scalp
// (Perrin, Pernier, Bertrand & Echallier 1989, Electroenceph. clin. Neurophysiol. 72:184):
//   V(r) = c0 + Σ_i w_i g(cos(r, r_i)),  g(x) = 1/(4π) Σ_{n≥1} (2n+1) / (n(n+1))^m P_n(x),
// with m = 4 and the weights from [G + αI, 1; 1ᵀ, 0] [w; c0] = [v; 0]. Same truncation (50
// Legendre terms) and regularisation (α = 1e-5) as MNE's implementation, which the unit test
// uses as reference. Plus the map's colour scale. Pure: no DOM, used by the scalp-map component.
import { projectToDisk, type Position } from '~/engine/montage'

export const SPLINE_ORDER = 4
export const LEGENDRE_TERMS = 50
export const SPLINE_ALPHA = 1e-5

const FACTORS = Array.from({ length: LEGENDRE_TERMS }, (_, k) => {
  const n = k + 1
  return (2 * n + 1) / (Math.pow(n, SPLINE_ORDER) * Math.pow(n + 1, SPLINE_ORDER) * 4 * Math.PI)
})

/** g(x) by the Legendre recurrence (n+1) P_{n+1} = (2n+1) x P_n - n P_{n-1}. */
export function splineG(x: number): number {
  let p0 = 1
  let p1 = x
  let sum = FACTORS[0] * p1
  for (let n = 1; n < LEGENDRE_TERMS; n++) {
    const p2 = ((2 * n + 1) * x * p1 - n * p0) / (n + 1)
    p0 = p1
    p1 = p2
    sum += FACTORS[n] * p1
  }
  return sum
}

function unit(p: Position): [number, number, number] {
  const n = Math.hypot(p.x, p.y, p.z) || 1
  return [p.x / n, p.y / n, p.z / n]
}

const dot = (a: number[], b: number[]) => a[0] * b[0] + a[1] * b[1] + a[2] * b[2]

/** Solves A x = b in place (Gaussian elimination with partial pivoting); A is n×n row-major. */
function solve(a: Float64Array, b: Float64Array, n: number): Float64Array {
  for (let k = 0; k < n; k++) {
    let pivot = k
    for (let i = k + 1; i < n; i++) if (Math.abs(a[i * n + k]) > Math.abs(a[pivot * n + k])) pivot = i
    if (Math.abs(a[pivot * n + k]) < 1e-300) throw new Error('spline system is singular (two electrodes at the same place?)')
    if (pivot !== k) {
      for (let j = 0; j < n; j++) [a[k * n + j], a[pivot * n + j]] = [a[pivot * n + j], a[k * n + j]]
      ;[b[k], b[pivot]] = [b[pivot], b[k]]
    }
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k] / a[k * n + k]
      if (f === 0) continue
      for (let j = k; j < n; j++) a[i * n + j] -= f * a[k * n + j]
      b[i] -= f * b[k]
    }
  }
  const x = new Float64Array(n)
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i]
    for (let j = i + 1; j < n; j++) s -= a[i * n + j] * x[j]
    x[i] = s / a[i * n + i]
  }
  return x
}

export interface SplineFit {
  electrodes: [number, number, number][]
  weights: Float64Array
  constant: number
}

/** Fits the spline through `values` at `positions` (any radius; directions are used). */
export function fitSpline(positions: Position[], values: ArrayLike<number>, alpha = SPLINE_ALPHA): SplineFit {
  const n = positions.length
  if (n < 2) throw new Error('a scalp map needs at least two electrodes')
  if (values.length !== n) throw new Error(`${values.length} values for ${n} electrodes`)
  const e = positions.map(unit)
  const size = n + 1
  const a = new Float64Array(size * size)
  const b = new Float64Array(size)
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) a[i * size + j] = splineG(dot(e[i], e[j])) + (i === j ? alpha : 0)
    a[i * size + n] = 1
    a[n * size + i] = 1
    b[i] = values[i]
  }
  const x = solve(a, b, size)
  return { electrodes: e, weights: x.subarray(0, n), constant: x[n] }
}

export function evaluateSpline(fit: SplineFit, at: Position): number {
  const p = unit(at)
  let v = fit.constant
  for (let i = 0; i < fit.electrodes.length; i++) v += fit.weights[i] * splineG(dot(p, fit.electrodes[i]))
  return v
}

/** Interpolation matrix (targets × electrodes), as MNE's _make_interpolation_matrix. */
export function interpolationMatrix(from: Position[], to: Position[], alpha = SPLINE_ALPHA): number[][] {
  const columns = from.map((_, k) => {
    const unitValues = from.map((__, i) => (i === k ? 1 : 0))
    const fit = fitSpline(from, unitValues, alpha)
    return to.map((p) => evaluateSpline(fit, p))
  })
  return to.map((_, r) => columns.map((col) => col[r]))
}

/** The point of the unit sphere drawn at disk position (x, y): inverse of projectToDisk. */
export function diskToSphere(x: number, y: number): Position {
  const r = Math.hypot(x, y)
  const theta = (r * Math.PI) / 2
  const phi = Math.atan2(y, x)
  return { x: Math.sin(theta) * Math.cos(phi), y: Math.sin(theta) * Math.sin(phi), z: Math.cos(theta) }
}

export interface ScalpGrid {
  size: number
  /** disk radius the grid covers (the projected electrodes plus a margin) */
  radius: number
  /** values row-major from the top (nose) row; NaN outside the head */
  values: Float64Array
  electrodes: { x: number; y: number }[]
}

/** Interpolated values on a size × size grid over the projected head. */
export function scalpGrid(positions: Position[], values: ArrayLike<number>, size = 64): ScalpGrid {
  const fit = fitSpline(positions, values)
  const electrodes = positions.map(projectToDisk)
  const radius = Math.max(1, ...electrodes.map((p) => Math.hypot(p.x, p.y))) * 1.08
  const out = new Float64Array(size * size)
  for (let row = 0; row < size; row++) {
    for (let col = 0; col < size; col++) {
      const x = ((col + 0.5) / size) * 2 - 1
      const y = 1 - ((row + 0.5) / size) * 2
      out[row * size + col] = Math.hypot(x, y) > 1 ? NaN : evaluateSpline(fit, diskToSphere(x * radius, y * radius))
    }
  }
  return { size, radius, values: out, electrodes }
}

// ---------------------------------------------------------------------------------------------
// Colour scale: Tiller's own diverging map for signed values, symmetric about zero. Blue for
// negative, a light neutral at zero, brass to rust for positive, linear in sRGB between anchors.
// Lightness falls steadily from the centre towards both ends, so the sign reads in grey too.

export const DIVERGING_ANCHORS: [number, [number, number, number]][] = [
  [-1, [24, 64, 140]],
  [-0.5, [95, 150, 215]],
  [0, [238, 236, 228]],
  [0.5, [227, 170, 69]],
  [1, [176, 62, 40]],
]

/** Colour of t in [-1, 1] (clamped) as [r, g, b] 0..255. */
export function divergingColour(t: number): [number, number, number] {
  const v = Math.max(-1, Math.min(1, Number.isFinite(t) ? t : 0))
  for (let i = 1; i < DIVERGING_ANCHORS.length; i++) {
    const [t1, c1] = DIVERGING_ANCHORS[i]
    const [t0, c0] = DIVERGING_ANCHORS[i - 1]
    if (v <= t1) {
      const f = (v - t0) / (t1 - t0)
      return [0, 1, 2].map((k) => Math.round(c0[k] + f * (c1[k] - c0[k]))) as [number, number, number]
    }
  }
  return DIVERGING_ANCHORS[DIVERGING_ANCHORS.length - 1][1]
}

/** WCAG 2.x relative luminance of an sRGB colour (0..255 channels). */
export function relativeLuminance([r, g, b]: [number, number, number]): number {
  const lin = (c: number) => {
    const s = c / 255
    return s <= 0.04045 ? s / 12.92 : Math.pow((s + 0.055) / 1.055, 2.4)
  }
  return 0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)
}
