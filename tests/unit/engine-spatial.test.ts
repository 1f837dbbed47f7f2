import { describe, expect, it } from 'vitest'
import fx from '../fixtures/engine/ica_pca.json'
import { createTrialSet } from '~/engine/covariance'
import { compareMethods, trainDecoder } from '~/engine/decoder'
import { createOnlineDecoder } from '~/engine/online'
import { buildTrialSet, planEpochs } from '~/engine/epochs'
import { quadForm } from '~/engine/linalg'
import { getSpatialMethod } from '~/engine/spatial/index'
import { simulateImagery } from '~/engine/synthetic'
import { positionFor } from '~/engine/montage'
import { seededNormal } from '~/engine/linalg'

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

describe('fixed spatial filters from montage positions', () => {
  // 10-10 positions from the montage module (Oostenveld & Praamstra 2001).
  const names = ['FC5', 'FC3', 'FC1', 'C5', 'C3', 'C1', 'CP5', 'CP3', 'CP1', 'Cz', 'F3', 'P3', 'T7']
  const positions = names.map((name) => ({ name, ...positionFor(name)! }))
  const noise = seededNormal(12)
  const set = createTrialSet([Float64Array.from({ length: names.length * 200 }, () => noise())], names.length, 200)
  const mctx = { channels: names, classes: ['a', 'b'], positions }

  it('CAR rows sum to zero; raw channels have identity patterns (Haufe forward model of W = I)', () => {
    const car = getSpatialMethod('car').fit(set, [0], mctx)
    car.filters.forEach((row) => expect(Math.abs(row.reduce((a, b) => a + b, 0))).toBeLessThan(1e-12))
    const none = getSpatialMethod('none').fit(set, [0], mctx)
    none.patterns.forEach((row, i) => row.forEach((v, j) => expect(v).toBeCloseTo(i === j ? 1 : 0, 9)))
  })

  it('small Laplacian of C3 uses FC3, CP3, C5, C1 (the nearest 10-10 ring), weights summing to -1', () => {
    const lap = getSpatialMethod('laplacian-small').fit(set, [0], mctx)
    const row = lap.filters[names.indexOf('C3')]
    expect(row[names.indexOf('C3')]).toBe(1)
    const used = names.filter((n, j) => n !== 'C3' && row[j] !== 0).sort()
    expect(used).toEqual(['C1', 'C5', 'CP3', 'FC3'])
    expect(row.reduce((a, b) => a + b, 0)).toBeCloseTo(0, 12)
  })

  it('large Laplacian of C3 uses the next ring (F3, P3, T7, Cz)', () => {
    const lap = getSpatialMethod('laplacian-large').fit(set, [0], mctx)
    const row = lap.filters[names.indexOf('C3')]
    expect(names.filter((n, j) => n !== 'C3' && row[j] !== 0).sort()).toEqual(['Cz', 'F3', 'P3', 'T7'])
  })

  it('bipolar derivations pair each channel with its nearest neighbour, each pair once', () => {
    const bip = getSpatialMethod('bipolar').fit(set, [0], mctx)
    const pairs = bip.componentNames
    expect(new Set(pairs.map((p) => p.split('-').sort().join('/'))).size).toBe(pairs.length)
    bip.filters.forEach((row) => {
      expect(row.filter((v) => v === 1)).toHaveLength(1)
      expect(row.filter((v) => v === -1)).toHaveLength(1)
    })
  })

  it('without positions the montage-based methods explain what they need', () => {
    expect(() => getSpatialMethod('laplacian-small').fit(set, [0], { channels: names, classes: ['a', 'b'] })).toThrow(/positions/)
  })
})
