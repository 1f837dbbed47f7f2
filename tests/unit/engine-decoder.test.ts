import { describe, expect, it } from 'vitest'
import { chronologicalFolds, compareMethods, trainDecoder } from '~/engine/decoder'
import { simulateImagery } from '~/engine/synthetic'

function corr(a: number[], b: number[]): number {
  const ma = a.reduce((s, v) => s + v, 0) / a.length
  const mb = b.reduce((s, v) => s + v, 0) / b.length
  let ab = 0, aa = 0, bb = 0
  a.forEach((v, i) => {
    ab += (v - ma) * (b[i] - mb)
    aa += (v - ma) ** 2
    bb += (b[i] - mb) ** 2
  })
  return ab / Math.sqrt(aa * bb)
}

const sim = simulateImagery({ seed: 2, trialsPerClass: 40 })

describe('training', () => {
  it('chronological folds are contiguous, disjoint and cover every trial', () => {
    const folds = chronologicalFolds(23, 5)
    expect(folds.flat()).toEqual(Array.from({ length: 23 }, (_, i) => i))
    folds.forEach((f) => f.forEach((v, i) => i > 0 && expect(v).toBe(f[i - 1] + 1)))
  })

  it('CSP recovers the planted source patterns (|r| > 0.9), Haufe et al. 2014 forward model', () => {
    const d = trainDecoder(sim.recording, { method: 'csp', pairs: 3, trainedAt: 'fixed' })
    // 'left' imagery desynchronises the right source: the largest eigenvalue (more power in
    // 'left' trials) belongs to the left source, the smallest to the right source.
    expect(Math.abs(corr(d.patterns[0], sim.sourcePatterns.left))).toBeGreaterThan(0.9)
    expect(Math.abs(corr(d.patterns[d.patterns.length - 1], sim.sourcePatterns.right))).toBeGreaterThan(0.9)
    expect(d.cv.accuracy).toBeGreaterThan(0.9)
    expect(d.cv.kappa).toBeGreaterThan(0.8)
    expect(d.cv.accuracy).toBeGreaterThan(d.cv.chanceLevel)
    expect(d.cv.confusion.flat().reduce((s, v) => s + v, 0)).toBe(80)
    expect(d.cv.folds).toHaveLength(5)
    expect(JSON.parse(JSON.stringify(d))).toEqual(d)
  })

  it('CAR and Laplacians beat raw channels against a broad background rhythm (McFarland et al. 1997)', () => {
    const rows = compareMethods(sim.recording, { positions: sim.positions, methods: ['none', 'car', 'laplacian-small', 'laplacian-large'] })
    const acc = Object.fromEntries(rows.map((r) => [r.method, r.accuracy!]))
    expect(acc.car).toBeGreaterThan(acc.none + 0.1)
    expect(acc['laplacian-small']).toBeGreaterThan(acc.none + 0.1)
    expect(acc['laplacian-large']).toBeGreaterThan(acc.none + 0.1)
  })

  it('methods that need positions say so instead of failing the comparison', () => {
    const rows = compareMethods(sim.recording, { methods: ['bipolar', 'csp'] })
    expect(rows[0].error).toMatch(/positions/)
    expect(rows[1].accuracy).toBeGreaterThan(0.9)
  })

  it('refuses a recording without enough trials per class', () => {
    const r = { ...sim.recording, cues: sim.recording.cues.slice(0, 1) }
    expect(() => trainDecoder(r)).toThrow(/at least two classes|usable trial/)
  })
})
