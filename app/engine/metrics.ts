// Metrics the field reports for a decoder: accuracy, Cohen's kappa (Cohen 1960), confusion
// matrix, Wolpaw information transfer rate (Wolpaw et al. 2000) and the binomial chance level
// for a finite trial count (Müller-Putz et al. 2008).

function checkSameLength(truth: ArrayLike<number>, predicted: ArrayLike<number>): void {
  if (truth.length !== predicted.length) throw new Error(`truth has ${truth.length} labels but predictions have ${predicted.length}`)
  if (truth.length === 0) throw new Error('no trials to score')
}

export function accuracy(truth: ArrayLike<number>, predicted: ArrayLike<number>): number {
  checkSameLength(truth, predicted)
  let hits = 0
  for (let i = 0; i < truth.length; i++) if (truth[i] === predicted[i]) hits++
  return hits / truth.length
}

/** confusion[true][predicted] counts over classes 0..classCount-1. */
export function confusionMatrix(truth: ArrayLike<number>, predicted: ArrayLike<number>, classCount: number): number[][] {
  checkSameLength(truth, predicted)
  const m = Array.from({ length: classCount }, () => new Array<number>(classCount).fill(0))
  for (let i = 0; i < truth.length; i++) {
    const t = truth[i]
    const p = predicted[i]
    if (!(t >= 0 && t < classCount && p >= 0 && p < classCount)) throw new Error(`label out of range 0..${classCount - 1}`)
    m[t][p]++
  }
  return m
}

/** Cohen's kappa: (p_o - p_e) / (1 - p_e), as sklearn.metrics.cohen_kappa_score (unweighted). */
export function cohenKappa(truth: ArrayLike<number>, predicted: ArrayLike<number>, classCount?: number): number {
  let k = classCount ?? 0
  if (classCount === undefined) for (let i = 0; i < truth.length; i++) k = Math.max(k, truth[i] + 1, predicted[i] + 1)
  const m = confusionMatrix(truth, predicted, k)
  const n = truth.length
  let observed = 0
  let expected = 0
  for (let i = 0; i < k; i++) {
    observed += m[i][i]
    let row = 0
    let col = 0
    for (let j = 0; j < k; j++) {
      row += m[i][j]
      col += m[j][i]
    }
    expected += (row * col) / n
  }
  observed /= n
  expected /= n
  if (expected === 1) return 1 // both raters used one identical class throughout
  return (observed - expected) / (1 - expected)
}

/**
 * Wolpaw information transfer rate in bits per selection:
 * B = log2 N + P log2 P + (1 - P) log2((1 - P) / (N - 1)).
 * At or below chance (P <= 1/N) the formula is not meaningful; we report 0, a common practice.
 */
export function itrBitsPerTrial(classCount: number, p: number): number {
  if (!(classCount >= 2)) throw new Error('ITR needs at least two classes')
  if (!(p >= 0 && p <= 1)) throw new Error(`accuracy must be in [0, 1], got ${p}`)
  if (p <= 1 / classCount) return 0
  const n = classCount
  let bits = Math.log2(n) + p * Math.log2(p)
  if (p < 1) bits += (1 - p) * Math.log2((1 - p) / (n - 1))
  return bits
}

/** Bits per minute from bits per trial and the time one selection takes. */
export function itrBitsPerMinute(classCount: number, p: number, secondsPerTrial: number): number {
  return (itrBitsPerTrial(classCount, p) * 60) / secondsPerTrial
}

function logChoose(n: number, k: number): number {
  return logGamma(n + 1) - logGamma(k + 1) - logGamma(n - k + 1)
}

// Lanczos approximation (g = 7, n = 9), accurate to ~1e-15 relative for the arguments used here.
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
  12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
]
function logGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x)
  x -= 1
  let a = LANCZOS[0]
  const t = x + 7.5
  for (let i = 1; i < 9; i++) a += LANCZOS[i] / (x + i)
  return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(a)
}

/** Binomial CDF P(X <= k) for X ~ Bin(n, p). */
export function binomialCdf(k: number, n: number, p: number): number {
  let sum = 0
  for (let i = 0; i <= k; i++) sum += Math.exp(logChoose(n, i) + i * Math.log(p) + (n - i) * Math.log1p(-p))
  return Math.min(1, sum)
}

/**
 * The accuracy a random classifier exceeds with probability at most alpha, for `trials`
 * trials and `classCount` balanced classes: the binomial inverse CDF at 1 - alpha divided by
 * the trial count (Müller-Putz et al. 2008), i.e. scipy.stats.binom.ppf(1 - alpha, n, 1/N) / n.
 */
export function chanceLevel(trials: number, classCount: number, alpha = 0.05): number {
  if (!Number.isInteger(trials) || trials < 1) throw new Error('chance level needs a positive trial count')
  if (!(classCount >= 2)) throw new Error('chance level needs at least two classes')
  if (!(alpha > 0 && alpha < 1)) throw new Error('alpha must be in (0, 1)')
  const p = 1 / classCount
  const q = 1 - alpha
  let cdf = 0
  for (let k = 0; k <= trials; k++) {
    cdf += Math.exp(logChoose(trials, k) + k * Math.log(p) + (trials - k) * Math.log1p(-p))
    // scipy's ppf is the smallest k with cdf(k) >= q; allow for rounding in the running sum.
    if (cdf >= q * (1 - 1e-12)) return k / trials
  }
  return 1
}
