// Linear discriminant analysis with analytic Ledoit-Wolf shrinkage of the within-class
// covariance (Ledoit & Wolf 2004; Blankertz et al. 2011), computed as
// sklearn.discriminant_analysis.LinearDiscriminantAnalysis(solver='lsqr', shrinkage='auto')
// does: per class, standardise, shrink, scale back; weight by class priors; solve.
import { ledoitWolf } from './covariance'
import { solveSymmetric } from './linalg'

export interface FittedLda {
  /** One row per score. Two classes: a single row, score > 0 means classes[1]. */
  weights: number[][]
  bias: number[]
  classCount: number
  means: number[][]
  priors: number[]
  /** Ledoit-Wolf intensity per class */
  shrinkage: number[]
}

export function fitLda(features: ArrayLike<number>[], labels: ArrayLike<number>, classCount: number): FittedLda {
  const n = features.length
  if (n !== labels.length) throw new Error('features and labels differ in length')
  if (n === 0) throw new Error('no training trials for the classifier')
  const p = features[0].length
  const byClass: ArrayLike<number>[][] = Array.from({ length: classCount }, () => [])
  for (let i = 0; i < n; i++) byClass[labels[i]].push(features[i])
  byClass.forEach((rows, k) => {
    if (rows.length < 2) throw new Error(`class ${k} has ${rows.length} training trial(s); at least 2 are needed`)
  })
  const priors = byClass.map((rows) => rows.length / n)
  const means = byClass.map((rows) => {
    const m = new Array<number>(p).fill(0)
    for (const r of rows) for (let j = 0; j < p; j++) m[j] += r[j] / rows.length
    return m
  })
  const pooled = new Float64Array(p * p)
  const shrinkage: number[] = []
  byClass.forEach((rows, k) => {
    // StandardScaler (population std, zero std treated as 1), ledoit_wolf, then scale back.
    const std = new Array<number>(p).fill(0)
    for (const r of rows) for (let j = 0; j < p; j++) std[j] += (r[j] - means[k][j]) ** 2 / rows.length
    const scale = std.map((v) => (Math.sqrt(v) < 10 * Number.EPSILON ? 1 : Math.sqrt(v)))
    const scaled = rows.map((r) => Array.from({ length: p }, (_, j) => (r[j] - means[k][j]) / scale[j]))
    const { covariance, intensity } = ledoitWolf(scaled)
    shrinkage.push(intensity)
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) pooled[i * p + j] += priors[k] * scale[i] * covariance[i * p + j] * scale[j]
  })
  const coef = solveSymmetric(pooled, p, means)
  const intercept = coef.map((w, k) => -0.5 * w.reduce((s, v, j) => s + v * means[k][j], 0) + Math.log(priors[k]))
  if (classCount === 2) {
    return {
      weights: [coef[1].map((v, j) => v - coef[0][j])],
      bias: [intercept[1] - intercept[0]],
      classCount,
      means,
      priors,
      shrinkage,
    }
  }
  return { weights: coef, bias: intercept, classCount, means, priors, shrinkage }
}

/** Decision scores (sklearn decision_function) into `out` (length = weights rows). */
export function ldaScores(lda: FittedLda, x: ArrayLike<number>, out: Float64Array): Float64Array {
  for (let k = 0; k < lda.weights.length; k++) {
    const w = lda.weights[k]
    let s = lda.bias[k]
    for (let j = 0; j < w.length; j++) s += w[j] * x[j]
    out[k] = s
  }
  return out
}

export interface LdaDecision {
  classIndex: number
  /** two classes: the signed score; more: the winning class's score */
  output: number
  probability: number
}

/** Decides from scores: sigmoid for two classes, softmax otherwise (as sklearn predict_proba). */
export function ldaDecide(lda: FittedLda, scores: Float64Array, into?: LdaDecision): LdaDecision {
  const d = into ?? { classIndex: 0, output: 0, probability: 0 }
  if (lda.classCount === 2) {
    const s = scores[0]
    d.output = s
    d.classIndex = s > 0 ? 1 : 0
    const p1 = 1 / (1 + Math.exp(-s))
    d.probability = s > 0 ? p1 : 1 - p1
    return d
  }
  let best = 0
  for (let k = 1; k < lda.classCount; k++) if (scores[k] > scores[best]) best = k
  let sum = 0
  for (let k = 0; k < lda.classCount; k++) sum += Math.exp(scores[k] - scores[best])
  d.classIndex = best
  d.output = scores[best]
  d.probability = 1 / sum
  return d
}

export function ldaPredict(lda: FittedLda, features: ArrayLike<number>[]): number[] {
  const scores = new Float64Array(lda.weights.length)
  return features.map((x) => ldaDecide(lda, ldaScores(lda, x, scores)).classIndex)
}
