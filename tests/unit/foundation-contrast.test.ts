// Text/background pairs the foundation screens use meet WCAG 2.x AA contrast: at least 4.5:1
// for normal text, 3:1 for large text and for the non-text marks of the scalp diagram
// (WCAG 2.1 success criteria 1.4.3 and 1.4.11). Relative luminance and the contrast ratio
// (L1 + 0.05) / (L2 + 0.05) follow the WCAG 2.1 definitions (sRGB linearisation with the
// 0.03928 threshold given there). Colours are read from app.css.
import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'

const css = readFileSync(new URL('../../app/app.css', import.meta.url), 'utf8')
const palette = Object.fromEntries([...css.matchAll(/--color-([a-z0-9-]+):\s*(#[0-9a-f]{6})/gi)].map((m) => [m[1], m[2]]))

function channel(c: number): number {
  const s = c / 255
  return s <= 0.03928 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4
}
function luminance(hex: string): number {
  const [r, g, b] = [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16))
  return 0.2126 * channel(r) + 0.7152 * channel(g) + 0.0722 * channel(b)
}
function contrast(a: string, b: string): number {
  const [hi, lo] = [luminance(a), luminance(b)].sort((x, y) => y - x)
  return (hi + 0.05) / (lo + 0.05)
}
/** A colour at some opacity over a background, as the browser composites it. */
function over(hex: string, alpha: number, background: string): string {
  const mix = [1, 3, 5].map((i) => Math.round(parseInt(hex.slice(i, i + 2), 16) * alpha + parseInt(background.slice(i, i + 2), 16) * (1 - alpha)))
  return `#${mix.map((v) => v.toString(16).padStart(2, '0')).join('')}`
}

describe('WCAG contrast formula', () => {
  it('gives the published extremes: black on white is 21:1, a colour on itself 1:1', () => {
    expect(contrast('#000000', '#ffffff')).toBeCloseTo(21, 10)
    expect(contrast('#777777', '#777777')).toBe(1)
    // #767676 on white is the well-known lightest grey that passes 4.5:1 (common practice).
    expect(contrast('#767676', '#ffffff')).toBeGreaterThanOrEqual(4.5)
    expect(contrast('#777777', '#ffffff')).toBeLessThan(4.5)
  })
})

describe('foundation screens', () => {
  const p = palette as Record<string, string>
  const text: [string, string, string][] = [
    ['body text', p.fog, p['ink-950']],
    ['hints and table headers', p.haze, p['ink-950']],
    ['hints inside panels', p.haze, p['ink-900']],
    ['links and codes', p.brass, p['ink-950']],
    ['field errors in panels', p.rust, p['ink-900']],
    ['consent "given", notices', p.sea, over(p.sea, 0.1, p['ink-950'])],
    ['outbox links', p.sky, p['ink-950']],
    ['primary button', p['ink-950'], p.brass],
    ['paper page text', p.navy, p.paper],
    ['paper lead text (navy at 80 %)', over(p.navy, 0.8, p.paper), p.paper],
    ['paper error', '#8a2a15', '#fbe3dc'],
    ['paper confirmation', '#17513a', '#dcefe6'],
  ]
  it.each(text)('%s: at least 4.5:1', (_, fg, bg) => {
    expect(fg && bg).toBeTruthy()
    expect(contrast(fg, bg)).toBeGreaterThanOrEqual(4.5)
  })

  const marks: [string, string, string][] = [
    ['electrode dots', p.brass, p['ink-900']],
    ['head outline', p.haze, p['ink-900']],
    ['reference mark', p.sky, p['ink-900']],
    ['ground mark', p.sea, p['ink-900']],
  ]
  it.each(marks)('scalp diagram %s: at least 3:1 against the panel', (_, fg, bg) => {
    expect(contrast(fg, bg)).toBeGreaterThanOrEqual(3)
  })
})
