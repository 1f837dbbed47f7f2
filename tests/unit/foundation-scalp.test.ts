// The scalp diagram draws sites where the 10-20 system puts them, seen from above with the
// nose up and the participant's right on the right (common practice for scalp maps): Cz in
// the centre, Fpz at the top of the 10 % contour, Oz at the bottom, T7 left and T8 right.
import { createElement } from 'react'
import { renderToStaticMarkup } from 'react-dom/server'
import { describe, expect, it } from 'vitest'
import { ScalpSites } from '~/components/scalp-sites'
import { montagePreset, PRESET_COUNTS } from '~/engine/montage'

function circles(markup: string): Map<string, { x: number; y: number }> {
  const out = new Map<string, { x: number; y: number }>()
  for (const m of markup.matchAll(/<g><title>([^<]+)<\/title><circle cx="([^"]+)" cy="([^"]+)"/g)) out.set(m[1], { x: Number(m[2]), y: Number(m[3]) })
  return out
}

describe('ScalpSites', () => {
  const markup = renderToStaticMarkup(createElement(ScalpSites, { channels: montagePreset(21), reference: 'FCz', ground: 'Fpz', title: '10-20' }))
  const at = circles(markup)

  it('puts every site of the 21-site 10-20 set on the drawing', () => {
    expect(at.size).toBe(21)
  })

  it('is oriented nose up, right on the right (SVG y grows downwards)', () => {
    const near = (a: number, b: number) => expect(a).toBeCloseTo(b, 6)
    near(at.get('Cz')!.x, 0)
    near(at.get('Cz')!.y, 0)
    near(at.get('Fpz')!.y, -1)
    near(at.get('Oz')!.y, 1)
    near(at.get('T7')!.x, -1)
    near(at.get('T8')!.x, 1)
    // C3 lies halfway between Cz and T7 on the coronal arc (20 % steps of 10-20).
    near(at.get('C3')!.x, -0.5)
    expect(at.get('F3')!.y).toBeLessThan(0)
    expect(at.get('P4')!.x).toBeGreaterThan(0)
  })

  it('describes itself to screen readers, with reference and ground', () => {
    expect(markup).toMatch(/role="img"/)
    expect(markup).toMatch(/aria-label="10-20\. 21 sites: Fp1, Fpz.*Reference FCz\. Ground Fpz\."/)
    expect(markup).toContain('<title>Reference: FCz</title>')
    expect(markup).toContain('<title>Ground: Fpz</title>')
  })

  it('draws every preset without a site outside the drawing', () => {
    for (const n of PRESET_COUNTS) {
      const sites = circles(renderToStaticMarkup(createElement(ScalpSites, { channels: montagePreset(n), title: String(n) })))
      expect(sites.size).toBe(n)
      for (const { x, y } of sites.values()) expect(Math.hypot(x, y)).toBeLessThan(1.42)
    }
  })

  it('as a thumbnail it is hidden from screen readers', () => {
    const thumb = renderToStaticMarkup(createElement(ScalpSites, { channels: montagePreset(8), title: 't', decorative: true, showLabels: false }))
    expect(thumb).toMatch(/aria-hidden="true"/)
    expect(thumb).not.toMatch(/role="img"|<title>/)
  })
})
