// Squared spatial-filter outputs of a block: sq[row * stride + s] = (w_row · x_s)^2 for an
// interleaved block x (x[s * C + c]) and filters W (row-major, rows × C). Register-blocked
// (four samples × two filters per pass) for speed; every output is summed over channels in
// the same sequential order whichever kernel computes it, so the numbers do not depend on the
// block size.

export function projectSquares(W: Float64Array, rows: number, C: number, x: Float64Array, samples: number, sq: Float64Array, rowIndex: Int32Array, stride: number): void {
  let s = 0
  for (; s + 3 < samples; s += 4) {
    const x0 = s * C, x1 = x0 + C, x2 = x1 + C, x3 = x2 + C
    let j = 0
    for (; j + 1 < rows; j += 2) {
      const u0 = j * C, v0 = u0 + C
      let a0 = 0, a1 = 0, a2 = 0, a3 = 0, b0 = 0, b1 = 0, b2 = 0, b3 = 0
      for (let c = 0; c < C; c++) {
        const u = W[u0 + c], v = W[v0 + c]
        const p = x[x0 + c], q = x[x1 + c], r = x[x2 + c], t = x[x3 + c]
        a0 += u * p; a1 += u * q; a2 += u * r; a3 += u * t
        b0 += v * p; b1 += v * q; b2 += v * r; b3 += v * t
      }
      const ra = rowIndex[j] * stride + s
      const rb = rowIndex[j + 1] * stride + s
      sq[ra] = a0 * a0; sq[ra + 1] = a1 * a1; sq[ra + 2] = a2 * a2; sq[ra + 3] = a3 * a3
      sq[rb] = b0 * b0; sq[rb + 1] = b1 * b1; sq[rb + 2] = b2 * b2; sq[rb + 3] = b3 * b3
    }
    for (; j < rows; j++) {
      const u0 = j * C
      let a0 = 0, a1 = 0, a2 = 0, a3 = 0
      for (let c = 0; c < C; c++) {
        const u = W[u0 + c]
        a0 += u * x[x0 + c]; a1 += u * x[x1 + c]; a2 += u * x[x2 + c]; a3 += u * x[x3 + c]
      }
      const ra = rowIndex[j] * stride + s
      sq[ra] = a0 * a0; sq[ra + 1] = a1 * a1; sq[ra + 2] = a2 * a2; sq[ra + 3] = a3 * a3
    }
  }
  for (; s < samples; s++) {
    const x0 = s * C
    let j = 0
    for (; j + 3 < rows; j += 4) {
      const u0 = j * C, u1 = u0 + C, u2 = u1 + C, u3 = u2 + C
      let a0 = 0, a1 = 0, a2 = 0, a3 = 0
      for (let c = 0; c < C; c++) {
        const p = x[x0 + c]
        a0 += W[u0 + c] * p; a1 += W[u1 + c] * p; a2 += W[u2 + c] * p; a3 += W[u3 + c] * p
      }
      sq[rowIndex[j] * stride + s] = a0 * a0
      sq[rowIndex[j + 1] * stride + s] = a1 * a1
      sq[rowIndex[j + 2] * stride + s] = a2 * a2
      sq[rowIndex[j + 3] * stride + s] = a3 * a3
    }
    for (; j < rows; j++) {
      const u0 = j * C
      let a = 0
      for (let c = 0; c < C; c++) a += W[u0 + c] * x[x0 + c]
      sq[rowIndex[j] * stride + s] = a * a
    }
  }
}
