// Causal IIR filters as cascaded second-order sections (SOS), the same layout scipy.signal uses:
// each section is [b0, b1, b2, a0, a1, a2] with a0 = 1. The band-pass is a true Butterworth
// design (analog prototype -> band-pass transform -> bilinear transform -> pole/zero pairing),
// written to follow scipy.signal.butter(order, [lo, hi], 'bandpass', output='sos') step by step
// so the coefficients can be compared one to one. The notch follows scipy.signal.iirnotch.
//
// Sample layout: `sosFilter` and `sosFilterInto` take INTERLEAVED sample-major blocks
// (block[s * channels + c]), the layout the ingest stream and the online decoder use.
// `sosFilterChannel` filters one channel-major array (a recording channel) with the same
// arithmetic, so offline and online paths give the same numbers.

/** Second-order sections, one row per section: [b0, b1, b2, a0, a1, a2]. JSON-safe. */
export type Sos = number[][]

export interface BandpassSpec {
  lowHz: number
  highHz: number
  /** Butterworth prototype order N as in scipy.signal.butter: the band-pass has 2N poles, N sections. */
  order: number
  rateHz: number
}

export interface NotchSpec {
  freqHz: number
  rateHz: number
  /** Quality factor: centre frequency / -3 dB bandwidth (scipy.signal.iirnotch's Q). */
  q: number
}

interface Complex {
  re: number
  im: number
}

const c = (re: number, im = 0): Complex => ({ re, im })
const add = (a: Complex, b: Complex): Complex => c(a.re + b.re, a.im + b.im)
const sub = (a: Complex, b: Complex): Complex => c(a.re - b.re, a.im - b.im)
const mul = (a: Complex, b: Complex): Complex => c(a.re * b.re - a.im * b.im, a.re * b.im + a.im * b.re)
const div = (a: Complex, b: Complex): Complex => {
  const d = b.re * b.re + b.im * b.im
  return c((a.re * b.re + a.im * b.im) / d, (a.im * b.re - a.re * b.im) / d)
}
const scale = (a: Complex, k: number): Complex => c(a.re * k, a.im * k)
const abs = (a: Complex): number => Math.hypot(a.re, a.im)
const csqrt = (a: Complex): Complex => {
  // principal square root, as numpy's sqrt on complex input
  const r = abs(a)
  const re = Math.sqrt((r + a.re) / 2)
  const im = Math.sqrt(Math.max(0, (r - a.re) / 2))
  return c(re, a.im < 0 ? -im : im)
}

function checkRate(rateHz: number): void {
  if (!(rateHz > 0) || !Number.isFinite(rateHz)) throw new Error(`sampling rate must be a positive number, got ${rateHz}`)
}

/**
 * Butterworth band-pass as SOS, matching scipy.signal.butter(order, [lowHz, highHz],
 * btype='bandpass', fs=rateHz, output='sos').
 */
export function designBandpass(spec: BandpassSpec): Sos {
  const { lowHz, highHz, order, rateHz } = spec
  checkRate(rateHz)
  const nyquist = rateHz / 2
  if (!Number.isInteger(order) || order < 1 || order > 12) throw new Error(`filter order must be an integer 1..12, got ${order}`)
  if (!(lowHz > 0 && highHz > lowHz && highHz < nyquist)) {
    throw new Error(`band ${lowHz}-${highHz} Hz must satisfy 0 < low < high < Nyquist (${nyquist} Hz)`)
  }
  // Analog Butterworth prototype (scipy.signal.buttap): poles on the left unit half-circle.
  const protoPoles: Complex[] = []
  for (let m = -order + 1; m < order; m += 2) {
    const angle = (Math.PI * m) / (2 * order)
    protoPoles.push(c(-Math.cos(angle), -Math.sin(angle)))
  }
  // Pre-warp the band edges for the bilinear transform with fs = 2 (scipy's convention).
  const fs = 2
  const warpedLow = 2 * fs * Math.tan((Math.PI * (lowHz / nyquist)) / fs)
  const warpedHigh = 2 * fs * Math.tan((Math.PI * (highHz / nyquist)) / fs)
  const bw = warpedHigh - warpedLow
  const wo = Math.sqrt(warpedLow * warpedHigh)
  // Low-pass to band-pass (scipy.signal.lp2bp_zpk).
  const woSq = c(wo * wo)
  const lowPoles = protoPoles.map((p) => scale(p, bw / 2))
  const bpPoles: Complex[] = [
    ...lowPoles.map((p) => add(p, csqrt(sub(mul(p, p), woSq)))),
    ...lowPoles.map((p) => sub(p, csqrt(sub(mul(p, p), woSq)))),
  ]
  const bpZeroCount = order // zeros at s = 0
  let gain = bw ** order
  // Bilinear transform (scipy.signal.bilinear_zpk): s-plane zeros at 0 map to z = 1, the
  // remaining degree maps to z = -1.
  const fs2 = c(2 * fs)
  const zPoles = bpPoles.map((p) => div(add(fs2, p), sub(fs2, p)))
  const zZeros: Complex[] = []
  for (let i = 0; i < bpZeroCount; i++) zZeros.push(c(1))
  for (let i = 0; i < bpPoles.length - bpZeroCount; i++) zZeros.push(c(-1))
  let num = c(1)
  for (let i = 0; i < bpZeroCount; i++) num = mul(num, fs2)
  let den = c(1)
  for (const p of bpPoles) den = mul(den, sub(fs2, p))
  gain *= div(num, den).re
  return zpkToSos(zZeros, zPoles, gain)
}

/**
 * Pairs poles and zeros into second-order sections the way scipy.signal.zpk2sos does with
 * pairing='nearest': the pole closest to the unit circle goes with its nearest zeros, and the
 * sections are then reversed so the most resonant section comes last; the gain goes to the first.
 * Handles the all-complex-poles / real-zeros case a Butterworth band-pass produces.
 */
function zpkToSos(zerosIn: Complex[], polesIn: Complex[], gain: number): Sos {
  const isReal = (x: Complex) => Math.abs(x.im) <= 1e-12 * Math.max(1, abs(x))
  // Keep one of each conjugate pair (positive imaginary part) plus real roots, like _cplxreal.
  const poles = polesIn.filter((p) => isReal(p) || p.im > 0).map((p) => (isReal(p) ? c(p.re) : p))
  poles.sort((a, b) => a.re - b.re || a.im - b.im)
  const zeros = zerosIn.map((z) => (isReal(z) ? c(z.re) : z)).filter((z) => isReal(z) || z.im > 0)
  if (poles.some(isReal)) throw new Error('internal: real poles are not expected in a Butterworth band-pass')
  const sections: Sos = []
  const nearestIndex = (p: Complex, onlyReal: boolean): number => {
    let best = -1
    let bestD = Infinity
    for (let i = 0; i < zeros.length; i++) {
      if (onlyReal && !isReal(zeros[i])) continue
      const d = abs(sub(zeros[i], p))
      if (d < bestD) {
        bestD = d
        best = i
      }
    }
    return best
  }
  while (poles.length > 0) {
    let worst = 0
    for (let i = 1; i < poles.length; i++) {
      if (Math.abs(1 - abs(poles[i])) < Math.abs(1 - abs(poles[worst]))) worst = i
    }
    const p1 = poles.splice(worst, 1)[0]
    // a(z) = (1 - p1 z^-1)(1 - conj(p1) z^-1)
    const a = [1, -2 * p1.re, p1.re * p1.re + p1.im * p1.im]
    let b: number[]
    const z1i = nearestIndex(p1, false)
    if (z1i < 0) {
      b = [0, 0, 1]
    } else {
      const z1 = zeros.splice(z1i, 1)[0]
      if (!isReal(z1)) {
        b = [1, -2 * z1.re, z1.re * z1.re + z1.im * z1.im]
      } else {
        const z2i = nearestIndex(p1, true)
        if (z2i < 0) {
          b = [0, 1, -z1.re]
        } else {
          const z2 = zeros.splice(z2i, 1)[0]
          b = [1, -(z1.re + z2.re), z1.re * z2.re]
        }
      }
    }
    sections.push([b[0], b[1], b[2], a[0], a[1], a[2]])
  }
  sections.reverse()
  for (let k = 0; k < 3; k++) sections[0][k] *= gain
  return sections
}

/** IIR notch as one SOS, matching scipy.signal.iirnotch(freqHz, q, fs=rateHz). */
export function designNotch(spec: NotchSpec): Sos {
  const { freqHz, rateHz, q } = spec
  checkRate(rateHz)
  if (!(freqHz > 0 && freqHz < rateHz / 2)) throw new Error(`notch frequency ${freqHz} Hz must lie between 0 and Nyquist (${rateHz / 2} Hz)`)
  if (!(q > 0)) throw new Error(`notch quality factor must be positive, got ${q}`)
  const w0 = ((2 * freqHz) / rateHz) * Math.PI
  const bw = w0 / q
  const beta = Math.tan(bw / 2) // with gb = 1/sqrt(2) the -3 dB width, sqrt(1-gb^2)/gb = 1
  const gain = 1 / (1 + beta)
  const cosw = Math.cos(w0)
  return [[gain, -2 * gain * cosw, gain, 1, -2 * gain * cosw, 2 * gain - 1]]
}

/** Filter state: per channel, per section, the two direct-form-II-transposed delays. */
export interface FilterState {
  channels: number
  sections: number
  /** z[(channel * sections + section) * 2 + k] */
  z: Float64Array
}

export function createFilterState(sos: Sos, channels: number): FilterState {
  validateSos(sos)
  if (!Number.isInteger(channels) || channels < 1) throw new Error(`channel count must be a positive integer, got ${channels}`)
  return { channels, sections: sos.length, z: new Float64Array(channels * sos.length * 2) }
}

export function cloneFilterState(state: FilterState): FilterState {
  return { channels: state.channels, sections: state.sections, z: state.z.slice() }
}

function validateSos(sos: Sos): void {
  if (!Array.isArray(sos) || sos.length === 0) throw new Error('SOS must have at least one section')
  for (const row of sos) {
    if (row.length !== 6 || row.some((v) => !Number.isFinite(v))) throw new Error('each SOS section needs six finite coefficients')
    if (Math.abs(row[3] - 1) > 1e-12) throw new Error('SOS sections must be normalised so that a0 = 1')
  }
}

/** Flattened coefficients for the hot loop: [b0, b1, b2, a1, a2] per section. */
export function packSos(sos: Sos): Float64Array {
  validateSos(sos)
  const out = new Float64Array(sos.length * 5)
  sos.forEach((row, i) => out.set([row[0], row[1], row[2], row[4], row[5]], i * 5))
  return out
}

/**
 * Filters an interleaved block (block[s * channels + c]) into the Float64Array `out` (same
 * layout, may be the input itself), advancing `state` in place. No allocation. Block-size invariant:
 * any split of a signal into blocks gives the same output as one call on the whole signal.
 */
export function sosFilterInto(
  packed: Float64Array,
  input: ArrayLike<number>,
  out: Float64Array,
  sampleCount: number,
  state: FilterState,
): void {
  const C = state.channels
  const S = state.sections
  const z = state.z
  const values = sampleCount * C
  if (out !== input) for (let i = 0; i < values; i++) out[i] = input[i]
  // Each section of each channel is a serial recurrence over samples; four channels side by side
  // give the processor four independent chains to overlap. The operations per sample are those
  // of a plain sample-by-sample loop, so any block split gives identical numbers.
  let ch = 0
  for (; ch + 3 < C; ch += 4) {
    for (let k = 0, p = 0; k < S; k++, p += 5) {
      const b0 = packed[p], b1 = packed[p + 1], b2 = packed[p + 2], a1 = packed[p + 3], a2 = packed[p + 4]
      const za = (ch * S + k) * 2
      const zb = za + S * 2
      const zc = zb + S * 2
      const zd = zc + S * 2
      let a0 = z[za], a1s = z[za + 1]
      let c0 = z[zb], c1 = z[zb + 1]
      let e0 = z[zc], e1 = z[zc + 1]
      let g0 = z[zd], g1 = z[zd + 1]
      if (b0 === 1 && b2 === 1 && (b1 === 2 || b1 === -2)) {
        // Sections after the first of a Butterworth band-pass have b = [1, ±2, 1] (zeros at
        // z = ±1). Multiplying by 1 or ±2 is exact (x + x = 2x), so these loops give the same
        // bits as the general one with three multiplications fewer per sample.
        const sign = b1 > 0 ? 1 : -1
        for (let i = ch; i < values; i += C) {
          const xa = out[i], xb = out[i + 1], xc = out[i + 2], xd = out[i + 3]
          const ya = xa + a0
          const yb = xb + c0
          const yc = xc + e0
          const yd = xd + g0
          a0 = sign * (xa + xa) - a1 * ya + a1s
          c0 = sign * (xb + xb) - a1 * yb + c1
          e0 = sign * (xc + xc) - a1 * yc + e1
          g0 = sign * (xd + xd) - a1 * yd + g1
          a1s = xa - a2 * ya
          c1 = xb - a2 * yb
          e1 = xc - a2 * yc
          g1 = xd - a2 * yd
          out[i] = ya
          out[i + 1] = yb
          out[i + 2] = yc
          out[i + 3] = yd
        }
      } else {
        for (let i = ch; i < values; i += C) {
          const xa = out[i], xb = out[i + 1], xc = out[i + 2], xd = out[i + 3]
          const ya = b0 * xa + a0
          const yb = b0 * xb + c0
          const yc = b0 * xc + e0
          const yd = b0 * xd + g0
          a0 = b1 * xa - a1 * ya + a1s
          c0 = b1 * xb - a1 * yb + c1
          e0 = b1 * xc - a1 * yc + e1
          g0 = b1 * xd - a1 * yd + g1
          a1s = b2 * xa - a2 * ya
          c1 = b2 * xb - a2 * yb
          e1 = b2 * xc - a2 * yc
          g1 = b2 * xd - a2 * yd
          out[i] = ya
          out[i + 1] = yb
          out[i + 2] = yc
          out[i + 3] = yd
        }
      }
      z[za] = a0; z[za + 1] = a1s
      z[zb] = c0; z[zb + 1] = c1
      z[zc] = e0; z[zc + 1] = e1
      z[zd] = g0; z[zd + 1] = g1
    }
  }
  for (; ch < C; ch++) {
    for (let k = 0, p = 0; k < S; k++, p += 5) {
      const b0 = packed[p], b1 = packed[p + 1], b2 = packed[p + 2], a1 = packed[p + 3], a2 = packed[p + 4]
      const zi = (ch * S + k) * 2
      let z0 = z[zi]
      let z1 = z[zi + 1]
      for (let i = ch; i < values; i += C) {
        const x = out[i]
        const y = b0 * x + z0
        z0 = b1 * x - a1 * y + z1
        z1 = b2 * x - a2 * y
        out[i] = y
      }
      z[zi] = z0
      z[zi + 1] = z1
    }
  }
}

/**
 * scipy.signal.sosfilt(sos, x, zi=...) for an interleaved multichannel block. Returns a new
 * Float64Array and a new state; the input state is not modified (use sosFilterInto on the hot
 * path). The block length must be a multiple of the state's channel count.
 */
export function sosFilter(sos: Sos, block: ArrayLike<number>, state: FilterState): { out: Float64Array; state: FilterState } {
  if (state.sections !== sos.length) throw new Error('filter state was made for a different number of sections')
  if (block.length % state.channels !== 0) throw new Error(`block length ${block.length} is not a multiple of ${state.channels} channels`)
  const next = cloneFilterState(state)
  const out = new Float64Array(block.length)
  sosFilterInto(packSos(sos), block, out, block.length / state.channels, next)
  return { out, state: next }
}

/**
 * Filters one channel-major signal from rest (zero initial state), as a recording channel is
 * filtered for training: the same loop as the online path, so the samples agree bit for bit.
 */
export function sosFilterChannel(packed: Float64Array, input: ArrayLike<number>, out: Float64Array = new Float64Array(input.length)): Float64Array {
  const state: FilterState = { channels: 1, sections: packed.length / 5, z: new Float64Array((packed.length / 5) * 2) }
  sosFilterInto(packed, input, out, input.length, state)
  return out
}

/** Magnitude response |H(e^jw)| of an SOS cascade at frequency f (Hz), for checks and display. */
export function sosMagnitude(sos: Sos, freqHz: number, rateHz: number): number {
  const w = (2 * Math.PI * freqHz) / rateHz
  const e1 = c(Math.cos(-w), Math.sin(-w))
  const e2 = c(Math.cos(-2 * w), Math.sin(-2 * w))
  let h = c(1)
  for (const [b0, b1, b2, a0, a1, a2] of sos) {
    const num = add(add(c(b0), scale(e1, b1)), scale(e2, b2))
    const den = add(add(c(a0), scale(e1, a1)), scale(e2, a2))
    h = mul(h, div(num, den))
  }
  return abs(h)
}

/** The band-pass (and optional notch) the decoder uses, as one cascade. */
export function designDecoderFilter(opts: { band: [number, number]; order: number; rateHz: number; notchHz: number | null; notchQ?: number }): Sos {
  const sos = designBandpass({ lowHz: opts.band[0], highHz: opts.band[1], order: opts.order, rateHz: opts.rateHz })
  if (opts.notchHz !== null && opts.notchHz < opts.rateHz / 2) sos.push(...designNotch({ freqHz: opts.notchHz, rateHz: opts.rateHz, q: opts.notchQ ?? 30 }))
  return sos
}
