// The signal-quality map: a head outline seen from above (nose up, right ear right) with each
// electrode placed by projectToDisk (azimuthal equidistant from Cz) and marked good / flat /
// noisy by shape and colour. Value maps (decoder patterns) use app/components/scalp-map.tsx.
import { useMemo } from 'react'
import { projectToDisk, type Position } from '~/engine/montage'

export interface Electrode extends Position {
  name: string
}

/** Disk radius in SVG units; the 10 % contour (Fpz-T7-Oz-T8) is at radius 1 in disk space. */
const R = 40
const HEAD = 46

function place(e: Position): { x: number; y: number } {
  // Rounded so the server-rendered and hydrated SVG agree (Math.acos may differ in the last bit).
  const p = projectToDisk(e)
  return { x: Math.round((50 + p.x * R) * 100) / 100, y: Math.round((50 - p.y * R) * 100) / 100 }
}

function HeadOutline({ stroke }: { stroke: string }) {
  return (
    <g fill="none" stroke={stroke} strokeWidth={1.4} strokeLinejoin="round">
      <circle cx={50} cy={50} r={HEAD} />
      {/* nose and ears, drawn as plain strokes */}
      <path d="M44 4.6 L50 -2 L56 4.6" />
      <path d="M3.8 42 q-4 8 0 16" />
      <path d="M96.2 42 q4 8 0 16" />
    </g>
  )
}

export type QualityState = 'good' | 'flat' | 'noisy' | 'unknown'

const QUALITY_FILL: Record<QualityState, string> = { good: '#5fc6b3', flat: '#7fb2ec', noisy: '#ef7a62', unknown: '#35474e' }

/** One electrode per channel; shape says the state too (filled disc good, ring flat, cross noisy). */
export function QualityMap({ electrodes, states, rmsUv, size = 220 }: { electrodes: Electrode[]; states: Record<string, QualityState>; rmsUv?: Record<string, number>; size?: number }) {
  const dots = useMemo(() => electrodes.map((e) => ({ name: e.name, ...place(e) })), [electrodes])
  const dense = electrodes.length > 32
  const r = dense ? 2.6 : 3.6
  return (
    <svg viewBox="-4 -6 108 110" width={size} height={size} role="img" aria-label="Signal quality of each electrode">
      <HeadOutline stroke="#a3b5ba" />
      {dots.map((d) => {
        const s = states[d.name] ?? 'unknown'
        const fill = QUALITY_FILL[s]
        const tip = `${d.name}: ${s}${rmsUv?.[d.name] !== undefined ? `, ${rmsUv[d.name].toFixed(1)} µV RMS` : ''}`
        return (
          <g key={d.name} data-channel={d.name} data-quality={s}>
            <title>{tip}</title>
            {s === 'flat' ? (
              <circle cx={d.x} cy={d.y} r={r} fill="none" stroke={fill} strokeWidth={1.3} />
            ) : s === 'noisy' ? (
              <path d={`M${d.x - r} ${d.y - r} L${d.x + r} ${d.y + r} M${d.x + r} ${d.y - r} L${d.x - r} ${d.y + r}`} stroke={fill} strokeWidth={1.6} />
            ) : (
              <circle cx={d.x} cy={d.y} r={r} fill={fill} />
            )}
            {dense ? null : (
              <text x={d.x} y={d.y + r + 3.6} fontSize={3.2} textAnchor="middle" fill="#a3b5ba">
                {d.name}
              </text>
            )}
          </g>
        )
      })}
    </svg>
  )
}
