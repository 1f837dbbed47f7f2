// Scalp drawings: a head outline seen from above (nose up, right ear right) with electrodes
// placed by projectToDisk (azimuthal equidistant from Cz). Two uses: a pattern map (values
// interpolated between electrodes by inverse-distance weighting, Shepard 1968) and the
// signal-quality map (each electrode marked good / flat / noisy by shape and colour).
import { useId, useMemo } from 'react'
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

const GRID = 28

/** Diverging scale of our own: deep blue through pale sand to brick, value in [-1, 1]. */
export function divergingColour(v: number): string {
  const t = Math.max(-1, Math.min(1, v))
  const lerp = (a: number, b: number, k: number) => Math.round(a + (b - a) * k)
  const mid = [236, 228, 208]
  const neg = [44, 92, 168]
  const pos = [196, 72, 48]
  const end = t < 0 ? neg : pos
  const k = Math.abs(t)
  return `rgb(${lerp(mid[0], end[0], k)},${lerp(mid[1], end[1], k)},${lerp(mid[2], end[2], k)})`
}

/** Inverse-distance-weighted values on a GRID×GRID raster over the head disk (power 2). */
export function interpolateOnDisk(points: { x: number; y: number; v: number }[], grid = GRID): (number | null)[] {
  const out: (number | null)[] = new Array(grid * grid).fill(null)
  const step = (2 * HEAD) / grid
  for (let gy = 0; gy < grid; gy++) {
    for (let gx = 0; gx < grid; gx++) {
      const x = 50 - HEAD + (gx + 0.5) * step
      const y = 50 - HEAD + (gy + 0.5) * step
      if (Math.hypot(x - 50, y - 50) > HEAD) continue
      let num = 0
      let den = 0
      let exact: number | null = null
      for (const p of points) {
        const d2 = (p.x - x) ** 2 + (p.y - y) ** 2
        if (d2 < 1e-6) {
          exact = p.v
          break
        }
        const w = 1 / d2
        num += w * p.v
        den += w
      }
      out[gy * grid + gx] = exact ?? (den > 0 ? num / den : null)
    }
  }
  return out
}

export function PatternMap({ electrodes, values, title, size = 150 }: { electrodes: Electrode[]; values: number[]; title: string; size?: number }) {
  const { cells, dots } = useMemo(() => {
    const max = Math.max(1e-12, ...values.map((v) => Math.abs(v)))
    const pts = electrodes.map((e, i) => ({ ...place(e), v: (values[i] ?? 0) / max, name: e.name }))
    return { cells: interpolateOnDisk(pts), dots: pts }
  }, [electrodes, values])
  const step = (2 * HEAD) / GRID
  const clipId = 'head-' + useId().replace(/[^a-zA-Z0-9_-]/g, '')
  return (
    <figure className="inline-flex flex-col items-center">
      <svg viewBox="-4 -6 108 110" width={size} height={size} role="img" aria-label={`${title}: scalp pattern`}>
        <defs>
          <clipPath id={clipId}>
            <circle cx={50} cy={50} r={HEAD} />
          </clipPath>
        </defs>
        <g clipPath={`url(#${clipId})`}>
          {cells.map((v, i) =>
            v === null ? null : (
              <rect key={i} x={50 - HEAD + (i % GRID) * step} y={50 - HEAD + Math.floor(i / GRID) * step} width={step + 0.15} height={step + 0.15} fill={divergingColour(v)} />
            ),
          )}
        </g>
        <HeadOutline stroke="#e6edef" />
        {dots.map((d) => (
          <circle key={d.name} cx={d.x} cy={d.y} r={0.9} fill="#0c1214" />
        ))}
      </svg>
      <figcaption className="mt-1 text-xs text-haze">{title}</figcaption>
    </figure>
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
