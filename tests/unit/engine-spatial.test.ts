import { describe, expect, it } from 'vitest'
import fx from '../fixtures/engine/ica_pca.json'
import { createTrialSet } from '~/engine/covariance'
import { compareMethods, trainDecoder } from '~/engine/decoder'
import { createOnlineDecoder } from '~/engine/online'
import { buildTrialSet, planEpochs } from '~/engine/epochs'
import { quadForm } from '~/engine/linalg'
import { getSpatialMethod } from '~/engine/spatial/index'
import { simulateImagery } from '~/engine/synthetic'

function corr(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let ab = 0, aa = 0, bb = 0
  for (let i = 0; i < a.length; i++) {
    ab += a[i] * b[i]
    aa += a[i] * a[i]
    bb += b[i] * b[i]
  }
  return ab / Math.sqrt(aa * bb)
}

const C = fx.X.length
const n = fx.X[0].length
const epoch = Float64Array.from(fx.X.flat())
const ctx = { channels: Array.from({ length: C }, (_, i) => `c${i}`), classes: ['a', 'b'] }

describe('unsupervised methods', () => {
  it('PCA eigenvalues and axes match numpy.linalg.eigh of the covariance', () => {
    const set = createTrialSet([epoch], C, n)
    const fitted = getSpatialMethod('pca').fit(set, [0], ctx)
    fitted.eigenvalues!.forEach((v, k) => expect(v).toBeCloseTo(fx.pcaEigenvalues[k], 6))
    // the two near-null directions (noise only) are kept too if above the numerical floor
    fitted.filters.slice(0, 4).forEach((w, k) => expect(Math.abs(corr(w, fx.pcaVectors[k]))).toBeGreaterThan(1 - 1e-6))
  })

  it('FastICA recovers the planted non-Gaussian sources, as sklearn FastICA does (|r| > 0.98)', () => {
    const set = createTrialSet([epoch], C, n, { thinnedSamples: n })
    const fitted = getSpatialMethod('ica').fit(set, [0], { ...ctx, components: 4 })
    expect(fitted.filters).toHaveLength(4)
    const ours = fitted.filters.map((w) => Float64Array.from({ length: n }, (_, t) => w.reduce((s, v, c) => s + v * fx.X[c][t], 0)))
    // Source (ground truth) and sklearn's components: each is matched by one of ours.
    for (const target of [...fx.sources, ...fx.sklearnSources]) {
      expect(Math.max(...ours.map((o) => Math.abs(corr(o, target))))).toBeGreaterThan(0.98)
    }
  })
})

describe('supervised variants', () => {
  it('multi-class: csp-ovr with three classes trains, decodes well above chance, and runs online', () => {
    const sim = simulateImagery({ classes: ['left', 'right', 'feet'], trialsPerClass: 25, seed: 4 })
    const d = trainDecoder(sim.recording, { method: 'csp-ovr', pairs: 2, classes: ['left', 'right', 'feet'], trainedAt: 'fixed' })
    expect(d.classes).toEqual(['left', 'right', 'feet'])
    expect(d.filters).toHaveLength(12)
    expect(d.lda.weights).toHaveLength(3)
    expect(d.cv.confusion).toHaveLength(3)
    expect(d.cv.accuracy).toBeGreaterThan(d.cv.chanceLevel)
    expect(d.cv.accuracy).toBeGreaterThan(0.7)
    const online = createOnlineDecoder(d)
    const out = online.push(new Float32Array(16 * d.channels.length), 16)
    expect(out.probability).toBeGreaterThan(0)
    expect(['left', 'right', 'feet']).toContain(out.className)
    // two-class CSP refuses three classes with a pointer to the right method
    expect(() => trainDecoder(sim.recording, { method: 'csp', classes: ['left', 'right', 'feet'] })).toThrow(/csp-ovr/)
  })

  it('regularized CSP reports its Ledoit-Wolf intensities and decodes as well as CSP here', () => {
    const sim = simulateImagery({ trialsPerClass: 30, seed: 8 })
    const rows = compareMethods(sim.recording, { methods: ['csp', 'rcsp'] })
    expect(rows[1].accuracy!).toBeGreaterThanOrEqual(rows[0].accuracy! - 0.05)
  })

  it('filter-bank CSP picks the bands that carry the planted 9-13 Hz ERD and decodes online', () => {
    const sim = simulateImagery({ trialsPerClass: 30, seed: 6 })
    const d = trainDecoder(sim.recording, { method: 'fbcsp', trainedAt: 'fixed' })
    expect(d.cv.accuracy).toBeGreaterThan(0.85)
    const bands = d.componentBands.map((b) => `${b[0]}-${b[1]}`)
    expect(bands.some((b) => b === '8-12' || b === '12-16')).toBe(true)
    const online = createOnlineDecoder(d)
    expect(online.push(new Float32Array(8 * d.channels.length), 8).bandPower).toHaveLength(d.filters.length)
  })

  it('with a 50 Hz notch the online features still equal the training features (same causal filter)', () => {
    const sim = simulateImagery({ trialsPerClass: 10, seed: 3 })
    const rec = sim.recording
    const d = trainDecoder(rec, { notchHz: 50, folds: 2, trainedAt: 'fixed' })
    expect(d.notchHz).toBe(50)
    const plan = planEpochs(rec, d.classes, d.epoch)
    const set = buildTrialSet(rec, plan, { band: d.band, order: d.filterOrder, notchHz: 50 })
    const end = plan.trials[0].start + plan.length
    const Cn = rec.channels.length
    const block = new Float32Array(end * Cn)
    for (let s = 0; s < end; s++) for (let c = 0; c < Cn; c++) block[s * Cn + c] = rec.data[c][s]
    const out = createOnlineDecoder(d).push(block, end)
    expect(out.ready).toBe(true)
    d.filters.forEach((w, k) => expect(Math.abs(out.bandPower[k] - Math.log(quadForm(w, set.outer[0], Cn) / set.samples[0]))).toBeLessThan(1e-9))
  })
})
