// Dense linear algebra the engine needs, on plain row-major arrays, delegating the
// decompositions to ml-matrix. Square matrices are Float64Array of length n*n (row-major).
import { CholeskyDecomposition, EigenvalueDecomposition, Matrix, pseudoInverse, solve } from 'ml-matrix'

export type Square = Float64Array

export function toMatrix(a: Square, n: number): Matrix {
  const m = new Matrix(n, n)
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m.set(i, j, a[i * n + j])
  return m
}

export function fromRows(rows: ArrayLike<number>[]): Square {
  const n = rows.length
  const out = new Float64Array(n * n)
  rows.forEach((r, i) => out.set(Array.from(r), i * n))
  return out
}

/** Makes a (numerically) symmetric matrix exactly symmetric before an eigen-decomposition. */
export function symmetrize(a: Square, n: number): Square {
  const out = new Float64Array(n * n)
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out[i * n + j] = 0.5 * (a[i * n + j] + a[j * n + i])
  return out
}

export interface Eigen {
  /** ascending, as scipy.linalg.eigh */
  values: number[]
  /** vectors[k] is the eigenvector of values[k] */
  vectors: number[][]
}

/** Symmetric eigen-decomposition, eigenvalues ascending. */
export function eigh(a: Square, n: number): Eigen {
  const e = new EigenvalueDecomposition(toMatrix(symmetrize(a, n), n), { assumeSymmetric: true })
  const v = e.eigenvectorMatrix
  const order = e.realEigenvalues.map((_, i) => i).sort((i, j) => e.realEigenvalues[i] - e.realEigenvalues[j])
  return {
    values: order.map((i) => e.realEigenvalues[i]),
    vectors: order.map((i) => v.getColumn(i)),
  }
}

/**
 * Generalized symmetric-definite problem A v = λ B v, like scipy.linalg.eigh(A, B): eigenvalues
 * ascending, eigenvectors normalised so that v' B v = 1. Solved by Cholesky whitening
 * (B = L L', M = L^-1 A L^-T).
 */
export function eighGeneralized(a: Square, b: Square, n: number): Eigen {
  const L = choleskyWithRidge(b, n)
  // Linv by forward substitution
  const Linv = new Float64Array(n * n)
  for (let col = 0; col < n; col++) {
    for (let i = 0; i < n; i++) {
      let s = i === col ? 1 : 0
      for (let k = 0; k < i; k++) s -= L.get(i, k) * Linv[k * n + col]
      Linv[i * n + col] = s / L.get(i, i)
    }
  }
  const M = matmul(matmul(Linv, a, n), transpose(Linv, n), n)
  const inner = eigh(M, n)
  // v = L^-T u
  const vectors = inner.vectors.map((u) => {
    const v = new Array<number>(n).fill(0)
    for (let i = 0; i < n; i++) {
      let s = 0
      for (let k = 0; k < n; k++) s += Linv[k * n + i] * u[k]
      v[i] = s
    }
    return v
  })
  return { values: inner.values, vectors }
}

/**
 * Cholesky factor of a covariance. A rank-deficient covariance (average-referenced data, a
 * flat or duplicated channel) gets the smallest ridge, from 1e-10 of its mean variance upward,
 * that makes it positive definite; a full-rank covariance is used as it is.
 */
function choleskyWithRidge(b: Square, n: number): Matrix {
  const sym = symmetrize(b, n)
  let meanVar = 0
  for (let i = 0; i < n; i++) meanVar += sym[i * n + i] / n
  if (!(meanVar > 0) || !Number.isFinite(meanVar)) throw new Error('covariance has no variance (all channels flat?)')
  for (let ridge = 0, step = 1e-10; step <= 1e-2; ridge = meanVar * step, step *= 100) {
    const m = toMatrix(sym, n)
    for (let i = 0; i < n; i++) m.set(i, i, m.get(i, i) + ridge)
    const chol = new CholeskyDecomposition(m)
    if (chol.isPositiveDefinite()) return chol.lowerTriangularMatrix
  }
  throw new Error('covariance is far from positive definite (flat or duplicated channels?); try regularized CSP')
}

export function matmul(a: Square, b: Square, n: number): Square {
  const out = new Float64Array(n * n)
  for (let i = 0; i < n; i++) {
    for (let k = 0; k < n; k++) {
      const aik = a[i * n + k]
      if (aik === 0) continue
      for (let j = 0; j < n; j++) out[i * n + j] += aik * b[k * n + j]
    }
  }
  return out
}

export function transpose(a: Square, n: number): Square {
  const out = new Float64Array(n * n)
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out[j * n + i] = a[i * n + j]
  return out
}

/** Quadratic form w' S w for a row-major n×n S. */
export function quadForm(w: ArrayLike<number>, s: Square, n: number): number {
  let total = 0
  for (let i = 0; i < n; i++) {
    const wi = w[i]
    if (wi === 0) continue
    let row = 0
    const base = i * n
    for (let j = 0; j < n; j++) row += s[base + j] * w[j]
    total += wi * row
  }
  return total
}

/** Solves A X = B for a symmetric positive (semi)definite A, least squares if singular. */
export function solveSymmetric(a: Square, n: number, rhs: number[][]): number[][] {
  const B = new Matrix(rhs).transpose() // n x k
  const X = solve(toMatrix(a, n), B, true)
  return X.transpose().to2DArray()
}

/**
 * Forward model (patterns) of spatial filters W (rows = components), Haufe et al. 2014:
 * A = Σx W' (W Σx W')^-1, returned as component-by-channel rows for display.
 */
export function haufePatterns(filters: number[][], covariance: Square, n: number): number[][] {
  const k = filters.length
  if (k === 0) return []
  const sw = filters.map((w) => {
    const out = new Array<number>(n).fill(0)
    for (let i = 0; i < n; i++) {
      let s = 0
      for (let j = 0; j < n; j++) s += covariance[i * n + j] * w[j]
      out[i] = s
    }
    return out
  }) // rows: (Σ w_k)'
  const inner = new Matrix(k, k)
  for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) {
    let s = 0
    for (let i = 0; i < n; i++) s += filters[a][i] * sw[b][i]
    inner.set(a, b, s)
  }
  const innerInv = pseudoInverse(inner)
  // A' = (W Σ W')^-1 (Σ W')'  -> rows are components
  return Array.from({ length: k }, (_, a) => {
    const row = new Array<number>(n).fill(0)
    for (let b = 0; b < k; b++) {
      const f = innerInv.get(a, b)
      for (let i = 0; i < n; i++) row[i] += f * sw[b][i]
    }
    return row
  })
}

/** Deterministic pseudo-random numbers (mulberry32) so fitted decoders are reproducible. */
export function seededRandom(seed: number): () => number {
  let t = seed >>> 0
  return () => {
    t = (t + 0x6d2b79f5) >>> 0
    let r = Math.imul(t ^ (t >>> 15), 1 | t)
    r = (r + Math.imul(r ^ (r >>> 7), 61 | r)) ^ r
    return ((r ^ (r >>> 14)) >>> 0) / 4294967296
  }
}

export function seededNormal(seed: number): () => number {
  const u = seededRandom(seed)
  return () => Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u())
}
