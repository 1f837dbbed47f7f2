import { describe, expect, it } from 'vitest'
import fx from '../fixtures/engine/csp_lda.json'
import { createTrialSet, ledoitWolf, shrunkPooledCovariance } from '~/engine/covariance'
import { fitLda, ldaDecide, ldaScores, ldaPredict } from '~/engine/lda'
import { fromRows, quadForm } from '~/engine/linalg'
import { cspMethod, pickEnds, solveCsp } from '~/engine/spatial/csp'

const C = fx.csp.covA.length
const T = fx.csp.X[0][0].length
const epochs = fx.csp.X.map((trial) => Float64Array.from(trial.flat()))
const labels = fx.csp.y

function corr(a: number[], b: number[]): number {
  const dot = a.reduce((s, v, i) => s + v * b[i], 0)
  return dot / Math.sqrt(a.reduce((s, v) => s + v * v, 0) * b.reduce((s, v) => s + v * v, 0))
}

describe('CSP', () => {
  it('class covariances equal mne concat covariances (X X\'/n)', () => {
    const set = createTrialSet(epochs, C, T)
    const idx = labels.flatMap((l, i) => (l === 0 ? [i] : []))
    const cov = idx.reduce((acc, i) => acc.map((v, k) => v + set.outer[i][k]), new Float64Array(C * C)).map((v) => v / (idx.length * T))
    fx.csp.covA.flat().forEach((v, k) => expect(cov[k]).toBeCloseTo(v, 9))
  })

  it('eigenvalues and eigenvectors match scipy.linalg.eigh(covA, covA + covB)', () => {
    const sol = solveCsp(fromRows(fx.csp.covA), fromRows(fx.csp.covB), C)
    sol.values.forEach((v, i) => expect(v).toBeCloseTo(fx.csp.eigenvalues[i], 10))
    // same normalisation v'(A+B)v = 1, so equal up to sign
    sol.vectors.forEach((v, i) => expect(Math.abs(corr(v, fx.csp.eigenvectors[i]))).toBeGreaterThan(1 - 1e-9))
    sol.vectors.forEach((v, i) => {
      const ref = fx.csp.eigenvectors[i]
      const sign = Math.sign(v.reduce((s, x, k) => s + x * ref[k], 0))
      v.forEach((x, k) => expect(sign * x).toBeCloseTo(ref[k], 8))
    })
  })

  it('spans the same filter subspace as scipy for m = 2 from each end', () => {
    const sol = solveCsp(fromRows(fx.csp.covA), fromRows(fx.csp.covB), C)
    const mine = pickEnds(C, 2).map((i) => sol.vectors[i])
    const theirs = [5, 4, 1, 0].map((i) => fx.csp.eigenvectors[i])
    // every reference filter is reproduced by a least-squares combination of ours (residual ~0)
    for (const t of theirs) {
      const best = Math.max(...mine.map((m) => Math.abs(corr(m, t))))
      expect(best).toBeGreaterThan(1 - 1e-9)
    }
  })

  it('log-variance features equal mne.decoding.CSP (component_order=alternate) features', () => {
    const set = createTrialSet(epochs, C, T)
    const fitted = cspMethod.fit(set, labels, { channels: Array.from({ length: C }, (_, i) => `c${i}`), classes: ['a', 'b'], pairs: 3 })
    // Pair each mne component with ours through its generalized eigenvalue. mne's 'empirical'
    // class covariance divides the concatenated class data by n - 1 (n = 20 trials × 200
    // samples), ours by n; that common factor leaves the CSP directions and eigenvalues alone but
    // scales the normalised filters, so the log-variances differ by exactly log(n / (n - 1)).
    const n = (labels.length / 2) * T
    const offset = Math.log(n / (n - 1))
    fx.csp.mneLambdas.forEach((lambda, j) => {
      const k = fitted.eigenvalues!.findIndex((v) => Math.abs(v - lambda) < 1e-8)
      expect(k).toBeGreaterThanOrEqual(0)
      const w = fitted.filters[k]
      set.outer.forEach((o, t) => {
        const logVar = Math.log(quadForm(w, o, C) / T)
        expect(logVar).toBeCloseTo(fx.csp.mneFeatures[t][j] + offset, 8)
      })
    })
  })

  it('regularized CSP shrinkage equals sklearn ledoit_wolf(assume_centered=True) on the class data', () => {
    const set = createTrialSet(epochs, C, T, { fourth: true })
    const idx = labels.flatMap((l, i) => (l === 0 ? [i] : []))
    expect(shrunkPooledCovariance(set, idx).intensity).toBeCloseTo(fx.csp.lwCenteredIntensity, 10)
  })
})

describe('Ledoit-Wolf and shrinkage LDA', () => {
  it('ledoit_wolf intensity and covariance match sklearn.covariance.ledoit_wolf', () => {
    const { covariance, intensity } = ledoitWolf(fx.ledoitWolf.rows)
    expect(intensity).toBeCloseTo(fx.ledoitWolf.intensity, 12)
    fx.ledoitWolf.covariance.flat().forEach((v, k) => expect(covariance[k]).toBeCloseTo(v, 9))
  })

  it('two classes: weights, bias, scores, probabilities and predictions match sklearn LDA(lsqr, auto)', () => {
    const ref = fx.lda2
    const lda = fitLda(ref.trainX, ref.trainY, 2)
    ref.coef[0].forEach((v, j) => expect(lda.weights[0][j]).toBeCloseTo(v, 8))
    expect(lda.bias[0]).toBeCloseTo(ref.intercept[0], 8)
    const scores = new Float64Array(1)
    ref.testX.forEach((x, i) => {
      ldaScores(lda, x, scores)
      expect(scores[0]).toBeCloseTo(ref.decision[i] as number, 8)
      const d = ldaDecide(lda, scores)
      expect(d.probability).toBeCloseTo(Math.max(...ref.proba[i]), 9)
    })
    expect(ldaPredict(lda, ref.testX)).toEqual(ref.predicted)
  })

  it('three classes: per-class weights and predictions match sklearn', () => {
    const ref = fx.lda3
    const lda = fitLda(ref.trainX, ref.trainY, 3)
    ref.coef.forEach((row, k) => row.forEach((v, j) => expect(lda.weights[k][j]).toBeCloseTo(v, 8)))
    ref.intercept.forEach((v, k) => expect(lda.bias[k]).toBeCloseTo(v, 8))
    expect(ldaPredict(lda, ref.testX)).toEqual(ref.predicted)
    const scores = new Float64Array(3)
    ref.testX.forEach((x, i) => expect(ldaDecide(lda, ldaScores(lda, x, scores)).probability).toBeCloseTo(Math.max(...ref.proba[i]), 9))
  })
})

describe('rank-deficient data', () => {
  it('CSP on average-referenced trials (rank C-1) still solves, with a minimal ridge', () => {
    // Re-referencing to the average makes the channels sum to zero (common practice in EEG).
    const car = epochs.map((e) => {
      const out = e.slice()
      for (let t = 0; t < T; t++) {
        let mean = 0
        for (let c = 0; c < C; c++) mean += e[c * T + t] / C
        for (let c = 0; c < C; c++) out[c * T + t] -= mean
      }
      return out
    })
    const fitted = cspMethod.fit(createTrialSet(car, C, T), labels, { channels: Array.from({ length: C }, (_, i) => `c${i}`), classes: ['a', 'b'], pairs: 2 })
    expect(fitted.filters).toHaveLength(4)
    fitted.eigenvalues!.forEach((v) => expect(v).toBeGreaterThanOrEqual(-1e-6))
    fitted.eigenvalues!.forEach((v) => expect(v).toBeLessThanOrEqual(1 + 1e-6))
  })
})
