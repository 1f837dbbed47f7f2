import { describe, expect, it } from 'vitest'
import fixture from '../fixtures/engine/metrics.json'
import { accuracy, chanceLevel, cohenKappa, confusionMatrix, itrBitsPerTrial } from '~/engine/metrics'

describe('kappa, accuracy, confusion', () => {
  // Source: sklearn.metrics.cohen_kappa_score / accuracy_score / confusion_matrix (make_metrics.py).
  for (const ref of fixture.kappa) {
    it(`matches sklearn for ${ref.truth.length} trials, ${ref.classes} classes`, () => {
      expect(cohenKappa(ref.truth, ref.predicted, ref.classes)).toBeCloseTo(ref.kappa, 12)
      expect(accuracy(ref.truth, ref.predicted)).toBeCloseTo(ref.accuracy, 14)
      expect(confusionMatrix(ref.truth, ref.predicted, ref.classes)).toEqual(ref.confusion)
    })
  }
})

describe('Wolpaw ITR', () => {
  // Worked by hand from B = log2 N + P log2 P + (1-P) log2((1-P)/(N-1)) (Wolpaw et al. 2000):
  // N=2, P=0.8: 1 + 0.8*log2(0.8) + 0.2*log2(0.2) = 1 - 0.257542 - 0.464386 = 0.278072
  it('N=2, P=0.8 gives 0.27807 bits', () => expect(itrBitsPerTrial(2, 0.8)).toBeCloseTo(0.278072, 6))
  // N=4, P=0.7: 2 + 0.7*log2(0.7) + 0.3*log2(0.1) = 2 - 0.3602012 - 0.9965784 = 0.6432204
  it('N=4, P=0.7 gives 0.64322 bits', () => expect(itrBitsPerTrial(4, 0.7)).toBeCloseTo(0.6432204, 6))
  it('perfect accuracy gives log2 N; chance gives 0', () => {
    expect(itrBitsPerTrial(4, 1)).toBe(2)
    expect(itrBitsPerTrial(2, 0.5)).toBe(0)
  })
})

describe('chance level', () => {
  // Source: scipy.stats.binom.ppf(1 - alpha, n, 1/N) / n, as Müller-Putz et al. 2008 propose.
  for (const ref of fixture.chance) {
    it(`${ref.trials} trials, ${ref.classes} classes, alpha ${ref.alpha}`, () => {
      expect(chanceLevel(ref.trials, ref.classes, ref.alpha)).toBeCloseTo(ref.level, 12)
    })
  }
})
