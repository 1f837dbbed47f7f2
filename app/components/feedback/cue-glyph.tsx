// Cue glyphs of our own design, on a ring the participant already knows from the fixation
// screen: the half of the disc on the side of the hand to imagine is filled; for the feet a
// broad band fills the lower part; for both hands both outer thirds; any other class shows
// its name inside the ring. Shapes, not colours, carry the meaning.
import { FEEDBACK_PALETTE as P } from './palette'

export function glyphKind(label: string): 'left' | 'right' | 'feet' | 'both' | 'other' {
  const l = label.toLowerCase()
  if (l.includes('left')) return 'left'
  if (l.includes('right')) return 'right'
  if (l.includes('feet') || l.includes('foot')) return 'feet'
  if (l.includes('both')) return 'both'
  return 'other'
}

export function CueGlyph({ label, size = '40vmin', dim = false }: { label: string; size?: string; dim?: boolean }) {
  const kind = glyphKind(label)
  const fill = P.ink
  return (
    <svg viewBox="0 0 100 100" style={{ width: size, height: size, opacity: dim ? 0.55 : 1 }} role="img" aria-label={`Imagine: ${label}`} data-glyph={kind}>
      <circle cx={50} cy={50} r={44} fill="none" stroke={fill} strokeWidth={4} />
      {kind === 'left' ? <path d="M50 6 A44 44 0 0 0 50 94 Z" fill={fill} /> : null}
      {kind === 'right' ? <path d="M50 6 A44 44 0 0 1 50 94 Z" fill={fill} /> : null}
      {kind === 'feet' ? <path d="M12 72 L88 72 A44 44 0 0 1 12 72 Z" fill={fill} /> : null}
      {kind === 'both' ? (
        <>
          <path d="M22 17 A44 44 0 0 0 22 83 Z" fill={fill} />
          <path d="M78 17 A44 44 0 0 1 78 83 Z" fill={fill} />
        </>
      ) : null}
      {kind === 'other' ? (
        <text x={50} y={58} textAnchor="middle" fontSize={label.length > 6 ? 12 : 18} fontWeight={700} fill={fill}>
          {label}
        </text>
      ) : null}
    </svg>
  )
}

/** Fixation: a small ring with a dot, where the glyph will appear. */
export function FixationMark({ size = '40vmin' }: { size?: string }) {
  return (
    <svg viewBox="0 0 100 100" style={{ width: size, height: size }} role="img" aria-label="Look at the centre">
      <circle cx={50} cy={50} r={9} fill="none" stroke={P.ink} strokeWidth={3} />
      <circle cx={50} cy={50} r={2.5} fill={P.ink} />
    </svg>
  )
}
