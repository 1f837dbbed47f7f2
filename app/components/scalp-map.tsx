// A scalp map of one value per electrode (e.g. a spatial pattern), interpolated with spherical
// splines (app/components/scalp-map-spline.ts) and drawn from above, nose up, with a colour bar
// in the map's unit. The interpolation runs in the browser after hydration; the server renders
// the head outline and electrodes.
import { useEffect, useMemo, useRef } from 'react'
import { divergingColour, scalpGrid } from '~/components/scalp-map-spline'
import type { Position } from '~/engine/montage'

const GRID = 72

export function ScalpMap({
  title,
  positions,
  names,
  values,
  unit,
  size = 180,
}: {
  title: string
  positions: Position[]
  names: string[]
  values: number[]
  unit: string
  size?: number
}) {
  const canvas = useRef<HTMLCanvasElement>(null)
  const limit = useMemo(() => Math.max(1e-12, ...values.map((v) => Math.abs(v))), [values])
  const grid = useMemo(() => (positions.length >= 2 ? scalpGrid(positions, values, GRID) : null), [positions, values])
  useEffect(() => {
    const el = canvas.current
    if (!el || !grid) return
    const ctx = el.getContext('2d')
    if (!ctx) return
    const image = ctx.createImageData(GRID, GRID)
    for (let i = 0; i < grid.values.length; i++) {
      const v = grid.values[i]
      if (Number.isNaN(v)) continue
      const [r, g, b] = divergingColour(v / limit)
      image.data.set([r, g, b, 255], i * 4)
    }
    ctx.putImageData(image, 0, 0)
  }, [grid, limit])
  const radius = grid?.radius ?? 1
  const toSvg = (p: { x: number; y: number }) => ({ cx: 50 + (p.x / radius) * 50, cy: 50 - (p.y / radius) * 50 })
  const strongest = values.reduce((best, v, i) => (Math.abs(v) > Math.abs(values[best]) ? i : best), 0)
  return (
    <figure className="m-0 inline-block">
      <div className="relative" style={{ width: size, height: size }}>
        <canvas ref={canvas} width={GRID} height={GRID} className="absolute inset-0 h-full w-full rounded-full" style={{ imageRendering: 'auto' }} aria-hidden="true" />
        <svg viewBox="0 0 100 100" className="absolute inset-0 h-full w-full overflow-visible" role="img" aria-label={`${title}: strongest at ${names[strongest] ?? '—'} (${values[strongest]?.toFixed(2) ?? '—'} ${unit})`}>
          <circle cx="50" cy="50" r="50" fill="none" stroke="#a3b5ba" strokeWidth="1" />
          <path d="M44 1 L50 -6 L56 1" fill="none" stroke="#a3b5ba" strokeWidth="1" />
          {grid?.electrodes.map((p, i) => {
            const { cx, cy } = toSvg(p)
            return (
              <circle key={names[i]} cx={cx} cy={cy} r="1.4" fill="#0c1214">
                <title>{`${names[i]}: ${values[i].toFixed(3)} ${unit}`}</title>
              </circle>
            )
          })}
        </svg>
      </div>
      <figcaption className="mt-1 text-center text-xs">{title}</figcaption>
    </figure>
  )
}

/** The colour bar for maps scaled to ±limit. */
export function ColourBar({ limitLabel, unit }: { limitLabel: string; unit: string }) {
  const stops = Array.from({ length: 11 }, (_, i) => {
    const [r, g, b] = divergingColour(i / 5 - 1)
    return `rgb(${r},${g},${b}) ${i * 10}%`
  })
  return (
    <div className="w-64 text-xs text-haze">
      <div className="h-3 rounded" style={{ background: `linear-gradient(to right, ${stops.join(', ')})` }} role="img" aria-label={`Colour scale from minus to plus ${limitLabel} ${unit}`} />
      <div className="mt-1 flex justify-between">
        <span>−{limitLabel}</span>
        <span>0</span>
        <span>+{limitLabel}</span>
      </div>
      <div className="text-center">{unit}</div>
    </div>
  )
}
