// Filter designs that shape white noise into EEG-like signals. Only the coefficients live
// here; the generator steps them inline over preallocated state arrays (the hot path).

/**
 * A two-pole resonator y[n] = a1·y[n−1] + a2·y[n−2] + gain·x[n] driven by unit white noise:
 * a narrow-band rhythm (mu, beta, alpha) with a spectral peak at `peakHz` and a −3 dB
 * width of about `bandwidthHz`. The pole radius r = exp(−π·B/fs) is the usual bandwidth
 * relation for a two-pole resonator; the pole angle θ is set so that the peak of |H|²
 * falls exactly on peakHz: cos θ = 2r·cos ω_peak / (1 + r²) (from d|H|²/dω = 0). The gain
 * makes the output variance 1, from the stationary variance of an AR(2) process,
 * var = (1 − a2) / ((1 + a2)((1 − a2)² − a1²)) (Box & Jenkins, Time Series Analysis, ch. 3;
 * from memory, checked numerically in the tests).
 */
export interface Resonator {
  a1: number
  a2: number
  gain: number
}

export function designResonator(peakHz: number, bandwidthHz: number, rateHz: number): Resonator {
  if (!(peakHz > 0 && peakHz < rateHz / 2)) throw new Error(`rhythm at ${peakHz} Hz is not between 0 and the Nyquist frequency ${rateHz / 2} Hz`)
  if (!(bandwidthHz > 0)) throw new Error('rhythm bandwidth must be positive')
  const r = Math.exp((-Math.PI * bandwidthHz) / rateHz)
  const omegaPeak = (2 * Math.PI * peakHz) / rateHz
  const cosTheta = Math.max(-1, Math.min(1, (2 * r * Math.cos(omegaPeak)) / (1 + r * r)))
  const a1 = 2 * r * cosTheta
  const a2 = -r * r
  const variance = (1 - a2) / ((1 + a2) * ((1 - a2) * (1 - a2) - a1 * a1))
  return { a1, a2, gain: 1 / Math.sqrt(variance) }
}

/**
 * A "pinking" filter: a cascade of first-order sections with poles and zeros interleaved at
 * equal steps on a log-frequency axis, which approximates a −10 dB/decade (1/f power)
 * slope between the first pole and the Nyquist frequency (common practice in audio noise
 * generation; the pole–zero interleaving idea is from memory). Each section is
 * y[n] = x[n] − zero·x[n−1] + pole·y[n−1] with matched-z coefficients exp(−2π f / fs).
 * `gain` makes the output variance 1 for unit white input.
 */
export interface PinkingFilter {
  poles: Float64Array
  zeros: Float64Array
  gain: number
}

export function designPinkingFilter(rateHz: number, lowestHz = 0.5, polesPerDecade = 2): PinkingFilter {
  const nyquist = rateHz / 2
  const step = Math.pow(10, 1 / polesPerDecade)
  const poles: number[] = []
  const zeros: number[] = []
  for (let f = lowestHz; f < nyquist; f *= step) {
    poles.push(Math.exp((-2 * Math.PI * f) / rateHz))
    zeros.push(Math.exp((-2 * Math.PI * Math.min(f * Math.sqrt(step), nyquist * 0.95)) / rateHz))
  }
  const filter: PinkingFilter = { poles: Float64Array.from(poles), zeros: Float64Array.from(zeros), gain: 1 }
  // Output variance for unit white input = energy of the impulse response; run it until the
  // slowest pole has decayed to nothing.
  const length = Math.ceil((12 * rateHz) / (2 * Math.PI * lowestHz)) + 16
  const xPrev = new Float64Array(poles.length)
  const yPrev = new Float64Array(poles.length)
  let energy = 0
  for (let n = 0; n < length; n++) {
    let v = n === 0 ? 1 : 0
    for (let s = 0; s < poles.length; s++) {
      const y = v - filter.zeros[s] * xPrev[s] + filter.poles[s] * yPrev[s]
      xPrev[s] = v
      yPrev[s] = y
      v = y
    }
    energy += v * v
  }
  filter.gain = 1 / Math.sqrt(energy)
  return filter
}
