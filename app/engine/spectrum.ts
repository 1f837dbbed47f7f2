// Power spectra for display and signal-quality checks: Welch's method with a periodic Hann
// window, half-overlapping segments, constant detrend and density scaling (V²/Hz), as
// scipy.signal.welch's defaults.

export interface WelchOptions {
  /** samples per segment (scipy's nperseg; default 256 or the signal length if shorter) */
  segment?: number
  /** overlap in samples (default segment / 2) */
  overlap?: number
}

export interface Spectrum {
  frequenciesHz: Float64Array
  /** power spectral density, µV²/Hz for µV input */
  power: Float64Array
}

/** In-place complex FFT of length 2^m (re, im), or a plain DFT for other lengths. */
function fft(re: Float64Array, im: Float64Array): void {
  const n = re.length
  if ((n & (n - 1)) !== 0) {
    const r = new Float64Array(n)
    const i2 = new Float64Array(n)
    for (let k = 0; k < n; k++) {
      let sr = 0
      let si = 0
      for (let t = 0; t < n; t++) {
        const a = (-2 * Math.PI * ((k * t) % n)) / n
        sr += re[t] * Math.cos(a) - im[t] * Math.sin(a)
        si += re[t] * Math.sin(a) + im[t] * Math.cos(a)
      }
      r[k] = sr
      i2[k] = si
    }
    re.set(r)
    im.set(i2)
    return
  }
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1
    for (; j & bit; bit >>= 1) j ^= bit
    j ^= bit
    if (i < j) {
      ;[re[i], re[j]] = [re[j], re[i]]
      ;[im[i], im[j]] = [im[j], im[i]]
    }
  }
  for (let len = 2; len <= n; len <<= 1) {
    const ang = (-2 * Math.PI) / len
    const wr = Math.cos(ang)
    const wi = Math.sin(ang)
    for (let i = 0; i < n; i += len) {
      let cr = 1
      let ci = 0
      for (let k = 0; k < len / 2; k++) {
        const a = i + k
        const b = a + len / 2
        const tr = re[b] * cr - im[b] * ci
        const ti = re[b] * ci + im[b] * cr
        re[b] = re[a] - tr
        im[b] = im[a] - ti
        re[a] += tr
        im[a] += ti
        const next = cr * wr - ci * wi
        ci = cr * wi + ci * wr
        cr = next
      }
    }
  }
}

export function welch(x: ArrayLike<number>, rateHz: number, options: WelchOptions = {}): Spectrum {
  if (!(rateHz > 0)) throw new Error('welch needs a positive sampling rate')
  if (x.length < 2) throw new Error('welch needs at least two samples')
  const segment = Math.min(options.segment ?? 256, x.length)
  const overlap = options.overlap ?? Math.floor(segment / 2)
  if (!(overlap >= 0 && overlap < segment)) throw new Error('overlap must be smaller than the segment')
  const step = segment - overlap
  const window = new Float64Array(segment)
  let windowPower = 0
  for (let i = 0; i < segment; i++) {
    window[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / segment) // periodic Hann (scipy 'hann')
    windowPower += window[i] * window[i]
  }
  const bins = Math.floor(segment / 2) + 1
  const power = new Float64Array(bins)
  const re = new Float64Array(segment)
  const im = new Float64Array(segment)
  let segments = 0
  for (let start = 0; start + segment <= x.length; start += step) {
    let mean = 0
    for (let i = 0; i < segment; i++) mean += x[start + i]
    mean /= segment
    for (let i = 0; i < segment; i++) {
      re[i] = (x[start + i] - mean) * window[i]
      im[i] = 0
    }
    fft(re, im)
    for (let k = 0; k < bins; k++) power[k] += re[k] * re[k] + im[k] * im[k]
    segments++
  }
  const scale = 1 / (rateHz * windowPower * segments)
  for (let k = 0; k < bins; k++) {
    power[k] *= scale
    // one-sided: double everything but DC and (for even segments) the Nyquist bin
    if (k > 0 && !(segment % 2 === 0 && k === bins - 1)) power[k] *= 2
  }
  const frequenciesHz = Float64Array.from({ length: bins }, (_, k) => (k * rateHz) / segment)
  return { frequenciesHz, power }
}

/** Integrated power between two frequencies (inclusive bins), µV². */
export function bandPowerOf(spectrum: Spectrum, fromHz: number, toHz: number): number {
  const df = spectrum.frequenciesHz.length > 1 ? spectrum.frequenciesHz[1] - spectrum.frequenciesHz[0] : 1
  let total = 0
  spectrum.frequenciesHz.forEach((f, k) => {
    if (f >= fromHz && f <= toHz) total += spectrum.power[k] * df
  })
  return total
}
