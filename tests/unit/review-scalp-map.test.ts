// Scalp maps: spherical-spline interpolation (Perrin et al. 1989) against MNE's implementation
// (fixture from make_scalp_spline.py), and the colour scale against the WCAG luminance formula.
import { describe, expect, it } from 'vitest'
import { DIVERGING_ANCHORS, divergingColour, evaluateSpline, fitSpline, interpolationMatrix, relativeLuminance, scalpGrid, splineG, diskToSphere } from '~/components/scalp-map-spline'
import { projectToDisk } from '~/engine/montage'
import ref from '../fixtures/review/scalp_spline.json'

describe('spherical spline', () => {
  it('g(x) equals MNE _calc_g (m = 4, 50 Legendre terms)', () => {
    ref.g_x.forEach((x, i) => expect(splineG(x)).toBeCloseTo(ref.g[i], 12))
  })

  it('interpolation matrix equals MNE _make_interpolation_matrix on standard_1005 positions', () => {
    const m = interpolationMatrix(ref.electrodes, ref.targets)
    m.forEach((row, r) => row.forEach((v, c) => expect(Math.abs(v - ref.matrix[r][c])).toBeLessThan(1e-6)))
  })

  it('passes through the electrode values when unregularised (α → 0), as an interpolating spline must', () => {
    const values = ref.electrodes.map((_, i) => Math.sin(i))
    const fit = fitSpline(ref.electrodes, values, 1e-12)
    ref.electrodes.forEach((e, i) => expect(Math.abs(evaluateSpline(fit, e) - values[i])).toBeLessThan(1e-3))
  })

  it('reproduces a constant field exactly (the c0 term), a property of the method', () => {
    const g = scalpGrid(ref.electrodes, ref.electrodes.map(() => 3.5), 16)
    for (const v of g.values) if (!Number.isNaN(v)) expect(v).toBeCloseTo(3.5, 9)
  })

  it('draws the grid in the same projection as the montage diagram', () => {
    for (const e of ref.electrodes) {
      const d = projectToDisk(e)
      const back = diskToSphere(d.x, d.y)
      expect(back.x).toBeCloseTo(e.x, 9)
      expect(back.y).toBeCloseTo(e.y, 9)
      expect(back.z).toBeCloseTo(e.z, 9)
    }
  })
})

describe('colour scale', () => {
  it('hits its anchors and interpolates linearly between them (worked example at t = 0.25)', () => {
    for (const [t, c] of DIVERGING_ANCHORS) expect(divergingColour(t)).toEqual(c)
    // halfway between [238,236,228] and [227,170,69]: [232.5, 203, 148.5] rounded
    expect(divergingColour(0.25)).toEqual([233, 203, 149])
    expect(divergingColour(5)).toEqual(divergingColour(1))
  })

  it('darkens monotonically from zero to either end (WCAG 2.x relative luminance)', () => {
    let previous = relativeLuminance(divergingColour(0))
    for (let t = 0.05; t <= 1.0001; t += 0.05) {
      const l = relativeLuminance(divergingColour(t))
      expect(l).toBeLessThan(previous)
      previous = l
    }
    previous = relativeLuminance(divergingColour(0))
    for (let t = -0.05; t >= -1.0001; t -= 0.05) {
      const l = relativeLuminance(divergingColour(t))
      expect(l).toBeLessThan(previous)
      previous = l
    }
  })
})
