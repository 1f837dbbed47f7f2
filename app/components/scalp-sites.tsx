// A top view of the head with a montage's electrode sites: our own drawing. Positions come
// from the unit sphere through projectToDisk (azimuthal equidistant from Cz, the 10 % contour
// Fpz-T7-Oz-T8 on the unit circle), nose up, the participant's right on the right.
import { positionFor, projectToDisk, type Position } from '~/engine/montage'

export interface ScalpSite extends Position {
  name: string
}

interface Props {
  channels: readonly ScalpSite[]
  /** Reference and ground as typed; drawn when they name a 10-20/10-10 site. */
  reference?: string
  ground?: string
  /** Shown to screen readers and as the SVG title. */
  title: string
  showLabels?: boolean
  /** A thumbnail next to text that already says what it shows: hidden from screen readers. */
  decorative?: boolean
  className?: string
}

// The drawing spans the sites below the 10 % contour too (T9, P9, Iz reach r = 1.25).
const EXTENT = 1.42

function toSvg(p: Position): { cx: number; cy: number } {
  const d = projectToDisk(p)
  return { cx: d.x, cy: -d.y }
}

function Head() {
  return (
    <g className="fill-none stroke-haze" strokeWidth={0.018} strokeLinejoin="round">
      {/* Nose: a soft point above the 10 % contour. */}
      <path d="M -0.13 -0.985 Q 0 -1.2 0.13 -0.985" />
      {/* Ears: rounded lobes at the preauricular line. */}
      <path d="M -0.99 -0.16 C -1.09 -0.17 -1.12 -0.08 -1.11 0.02 C -1.1 0.12 -1.07 0.2 -0.985 0.17" />
      <path d="M 0.99 -0.16 C 1.09 -0.17 1.12 -0.08 1.11 0.02 C 1.1 0.12 1.07 0.2 0.985 0.17" />
      <circle cx={0} cy={0} r={1} />
      {/* Midline and preauricular line, faint, to orient the eye. */}
      <path d="M 0 -1 V 1 M -1 0 H 1" strokeWidth={0.006} strokeDasharray="0.03 0.03" className="stroke-ink-600" />
    </g>
  )
}

export function ScalpSites({ channels, reference, ground, title, showLabels = true, decorative = false, className = 'w-full max-w-md' }: Props) {
  const dense = channels.length > 40
  const dot = dense ? 0.04 : 0.05
  const font = dense ? 0.062 : 0.085
  const refPos = reference ? positionFor(reference) : undefined
  const gndPos = ground ? positionFor(ground) : undefined
  const names = channels.map((c) => c.name).join(', ')
  const description = `${channels.length} sites: ${names}.${reference ? ` Reference ${reference}.` : ''}${ground ? ` Ground ${ground}.` : ''}`
  return (
    <svg
      viewBox={`${-EXTENT} ${-EXTENT} ${2 * EXTENT} ${2 * EXTENT}`}
      className={className}
      {...(decorative ? { 'aria-hidden': true } : { role: 'img', 'aria-label': `${title}. ${description}` })}
    >
      {decorative ? null : <title>{title}</title>}
      <Head />
      {channels.map((c) => {
        const { cx, cy } = toSvg(c)
        return (
          <g key={c.name}>
            {decorative ? null : <title>{c.name}</title>}
            <circle cx={cx} cy={cy} r={dot} className="fill-brass stroke-ink-950" strokeWidth={0.01} />
            {showLabels ? (
              <text x={cx} y={cy + dot * 1.5 + font * 0.85} textAnchor="middle" fontSize={font} className="fill-fog">
                {c.name}
              </text>
            ) : null}
          </g>
        )
      })}
      {refPos ? (
        <g>
          <title>{`Reference: ${reference}`}</title>
          <rect x={toSvg(refPos).cx - dot * 1.45} y={toSvg(refPos).cy - dot * 1.45} width={dot * 2.9} height={dot * 2.9} className="fill-none stroke-sky" strokeWidth={0.016} />
        </g>
      ) : null}
      {gndPos ? (
        <g>
          <title>{`Ground: ${ground}`}</title>
          <path
            d={`M ${toSvg(gndPos).cx} ${toSvg(gndPos).cy - dot * 1.8} l ${dot * 1.8} ${dot * 1.8} l ${-dot * 1.8} ${dot * 1.8} l ${-dot * 1.8} ${-dot * 1.8} z`}
            className="fill-none stroke-sea"
            strokeWidth={0.016}
          />
        </g>
      ) : null}
    </svg>
  )
}

/** The key to the reference and ground marks, as text next to the drawing. */
export function ScalpLegend({ reference, ground }: { reference?: string; ground?: string }) {
  const refDrawn = reference ? positionFor(reference) !== undefined : false
  const gndDrawn = ground ? positionFor(ground) !== undefined : false
  return (
    <ul className="mt-3 space-y-1 text-sm text-haze">
      <li className="flex items-center gap-2">
        <svg viewBox="-1 -1 2 2" className="h-4 w-4" aria-hidden="true">
          <circle r={0.55} className="fill-brass" />
        </svg>
        Recording site
      </li>
      <li className="flex items-center gap-2">
        <svg viewBox="-1 -1 2 2" className="h-4 w-4" aria-hidden="true">
          <rect x={-0.8} y={-0.8} width={1.6} height={1.6} className="fill-none stroke-sky" strokeWidth={0.25} />
        </svg>
        Reference: {reference || '—'}
        {reference && !refDrawn ? ' (not a 10-20 site, not drawn)' : ''}
      </li>
      <li className="flex items-center gap-2">
        <svg viewBox="-1 -1 2 2" className="h-4 w-4" aria-hidden="true">
          <path d="M 0 -0.85 L 0.85 0 L 0 0.85 L -0.85 0 Z" className="fill-none stroke-sea" strokeWidth={0.25} />
        </svg>
        Ground: {ground || '—'}
        {ground && !gndDrawn ? ' (not a 10-20 site, not drawn)' : ''}
      </li>
    </ul>
  )
}
