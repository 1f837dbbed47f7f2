// The feedback view's calm, light, high-contrast palette, with the WCAG 2 contrast formula so
// a test can hold every text and glyph colour to 7:1 (WCAG 1.4.6, enhanced contrast).
export const FEEDBACK_PALETTE = {
  background: '#f6f3ec', // paper
  ink: '#162536', // navy: text, glyphs
  soft: '#3d4a59', // secondary text
  track: '#d9d2c2',
  target: '#1f4e79',
  marker: '#162536',
} as const

/** Relative luminance of an sRGB colour (WCAG 2.x definition). */
export function relativeLuminance(hex: string): number {
  const v = hex.replace('#', '')
  const channel = (i: number) => {
    const c = parseInt(v.slice(i, i + 2), 16) / 255
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4
  }
  return 0.2126 * channel(0) + 0.7152 * channel(2) + 0.0722 * channel(4)
}

/** Contrast ratio (L1 + 0.05) / (L2 + 0.05), lighter over darker (WCAG 2.x). */
export function contrastRatio(a: string, b: string): number {
  const [hi, lo] = [relativeLuminance(a), relativeLuminance(b)].sort((x, y) => y - x)
  return (hi + 0.05) / (lo + 0.05)
}
