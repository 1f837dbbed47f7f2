// Static review plots drawn with uPlot. uPlot needs the DOM, so it is loaded and created in an
// effect (never during server rendering); the server renders a sized placeholder with the
// figure's text summary, which is also what a screen reader gets.
import { useEffect, useRef } from 'react'
import type uPlot from 'uplot'
import 'uplot/dist/uPlot.min.css'

/** Chart colours from the app palette (app/app.css), one per class / series. */
export const SERIES_COLOURS = ['#7fb2ec', '#e3aa45', '#5fc6b3', '#ef7a62', '#c9a0f0', '#a3b5ba']

const AXIS = { stroke: '#a3b5ba', grid: { stroke: '#27363c', width: 1 }, ticks: { stroke: '#35474e', width: 1 } }

function useUplot(make: (U: typeof uPlot, el: HTMLDivElement, width: number) => uPlot, deps: unknown[]) {
  const ref = useRef<HTMLDivElement>(null)
  useEffect(() => {
    const el = ref.current
    if (!el) return
    let plot: uPlot | null = null
    let cancelled = false
    let observer: ResizeObserver | null = null
    import('uplot').then(({ default: U }) => {
      if (cancelled) return
      el.replaceChildren()
      plot = make(U, el, Math.max(200, el.clientWidth))
      observer = new ResizeObserver(() => plot?.setSize({ width: Math.max(200, el.clientWidth), height: plot.height }))
      observer.observe(el)
    })
    return () => {
      cancelled = true
      observer?.disconnect()
      plot?.destroy()
    }
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, deps)
  return ref
}

function Frame({ label, summary, height, innerRef }: { label: string; summary: string; height: number; innerRef: React.RefObject<HTMLDivElement | null> }) {
  return (
    <figure className="m-0">
      <div ref={innerRef} role="img" aria-label={`${label}. ${summary}`} style={{ minHeight: height + 40 }} className="w-full">
        <p className="text-sm text-haze">{summary}</p>
      </div>
      <figcaption className="sr-only">{label}</figcaption>
    </figure>
  )
}

export interface TimelineBand {
  fromSeconds: number
  toSeconds: number
  classIndex: number
  label: string
}

export interface TimelineMark {
  atSeconds: number
  label: string
  kind: 'annotation' | 'event'
}

/**
 * A run's timeline: classifier output (line) and decided class (steps) against time, with the
 * cued imagery periods as coloured bands and annotations / device events as vertical marks.
 */
export function TimelineChart({
  seconds,
  output,
  decided,
  classes,
  bands,
  marks,
  height = 220,
}: {
  seconds: number[]
  output: number[]
  decided: number[]
  classes: string[]
  bands: TimelineBand[]
  marks: TimelineMark[]
  height?: number
}) {
  const summary = `${seconds.length} decisions over ${seconds.length ? seconds[seconds.length - 1].toFixed(0) : 0} s, ${bands.length} cued trials, ${marks.length} marks`
  const ref = useUplot(
    (U, el, width) => {
      const drawBands = (u: uPlot) => {
        const ctx = u.ctx
        const top = u.bbox.top
        const h = u.bbox.height
        ctx.save()
        for (const b of bands) {
          const x0 = u.valToPos(b.fromSeconds, 'x', true)
          const x1 = u.valToPos(b.toSeconds, 'x', true)
          ctx.fillStyle = `${SERIES_COLOURS[b.classIndex % SERIES_COLOURS.length]}33`
          ctx.fillRect(x0, top, Math.max(1, x1 - x0), h)
        }
        for (const m of marks) {
          const x = u.valToPos(m.atSeconds, 'x', true)
          ctx.strokeStyle = m.kind === 'annotation' ? '#e6edef' : '#ef7a62'
          ctx.setLineDash(m.kind === 'annotation' ? [] : [4, 3])
          ctx.beginPath()
          ctx.moveTo(x, top)
          ctx.lineTo(x, top + h)
          ctx.stroke()
        }
        ctx.restore()
      }
      return new U(
        {
          width,
          height,
          scales: { x: { time: false }, class: { range: [-0.5, Math.max(1, classes.length - 1) + 0.5] } },
          axes: [
            { ...AXIS, label: 'time in run (s)' },
            { ...AXIS, label: 'classifier output', scale: 'y' },
            { ...AXIS, side: 1, scale: 'class', grid: { show: false }, values: (_u, ticks) => ticks.map((t) => (Number.isInteger(t) ? (classes[t] ?? '') : '')), incrs: [1] },
          ],
          series: [
            { label: 's' },
            { label: 'output', stroke: '#e6edef', width: 1, scale: 'y' },
            { label: 'decided class', stroke: '#e3aa45', width: 1.5, scale: 'class', paths: U.paths.stepped!({ align: 1 }), value: (_u, v) => (v === null ? '—' : (classes[v] ?? String(v))) },
          ],
          hooks: { drawClear: [drawBands] },
          legend: { show: true },
          cursor: { drag: { x: true, y: false } },
        },
        [seconds, output, decided],
        el,
      )
    },
    [seconds, output, decided, classes, bands, marks, height],
  )
  return <Frame label="Run timeline" summary={summary} height={height} innerRef={ref} />
}

/** Bars over bin edges (n + 1 edges for n bins, or n edges with an open last bin). */
export function HistogramChart({ edges, counts, xLabel, height = 180 }: { edges: number[]; counts: number[]; xLabel: string; height?: number }) {
  const summary = `${counts.reduce((a, b) => a + b, 0)} values in ${counts.length} bins from ${edges[0]?.toFixed(2) ?? 0} to ${edges[edges.length - 1]?.toFixed(2) ?? 0}`
  const ref = useUplot(
    (U, el, width) => {
      const x = counts.map((_, i) => edges[i] ?? edges[edges.length - 1])
      return new U(
        {
          width,
          height,
          scales: { x: { time: false } },
          axes: [{ ...AXIS, label: xLabel }, { ...AXIS, label: 'count' }],
          series: [{ label: xLabel }, { label: 'count', fill: '#5fc6b355', stroke: '#5fc6b3', paths: U.paths.bars!({ size: [0.95, 100], align: 1 }) }],
          legend: { show: false },
        },
        [x, counts],
        el,
      )
    },
    [edges, counts, xLabel, height],
  )
  return <Frame label={`Histogram of ${xLabel}`} summary={summary} height={height} innerRef={ref} />
}

export interface LineSeries {
  label: string
  values: (number | null)[]
  /** 'y' (left axis) or 'y2' (right axis) */
  scale?: 'y' | 'y2'
  dash?: number[]
}

/** Several series over one x axis; points drawn, gaps where a value is null. */
export function LineChart({
  x,
  series,
  xLabel,
  yLabel,
  y2Label,
  xIsTime = false,
  yRange,
  height = 220,
  summary,
  logY = false,
}: {
  x: number[]
  series: LineSeries[]
  xLabel: string
  yLabel: string
  y2Label?: string
  xIsTime?: boolean
  yRange?: [number, number]
  height?: number
  summary: string
  logY?: boolean
}) {
  const ref = useUplot(
    (U, el, width) =>
      new U(
        {
          width,
          height,
          scales: {
            x: { time: xIsTime },
            y: yRange ? { range: yRange } : logY ? { distr: 3 } : {},
            y2: {},
          },
          axes: [
            { ...AXIS, label: xLabel },
            { ...AXIS, label: yLabel, scale: 'y' },
            ...(y2Label ? [{ ...AXIS, label: y2Label, scale: 'y2', side: 1, grid: { show: false } }] : []),
          ],
          series: [
            { label: xLabel },
            ...series.map((s, i) => ({
              label: s.label,
              stroke: SERIES_COLOURS[i % SERIES_COLOURS.length],
              width: 2,
              dash: s.dash,
              scale: s.scale ?? 'y',
              points: { show: x.length < 60, size: 7 },
              spanGaps: false,
            })),
          ],
        },
        [x, ...series.map((s) => s.values)] as uPlot.AlignedData,
        el,
      ),
    [x, series, xLabel, yLabel, y2Label, xIsTime, yRange, height, logY],
  )
  return <Frame label={`${yLabel} against ${xLabel}`} summary={summary} height={height} innerRef={ref} />
}

/** confusion[true][predicted] as a table with row and column headers. */
export function ConfusionMatrix({ classes, confusion, caption }: { classes: string[]; confusion: number[][]; caption: string }) {
  const max = Math.max(1, ...confusion.flat())
  return (
    <table className="text-sm">
      <caption className="mb-1 text-left text-haze">{caption}</caption>
      <thead>
        <tr>
          <th scope="col" className="px-2 py-1 text-left text-xs font-normal text-haze">
            cued ↓ / decided →
          </th>
          {classes.map((c) => (
            <th key={c} scope="col" className="px-3 py-1 font-medium">
              {c}
            </th>
          ))}
        </tr>
      </thead>
      <tbody>
        {confusion.map((row, i) => (
          <tr key={classes[i]}>
            <th scope="row" className="px-2 py-1 text-left font-medium">
              {classes[i]}
            </th>
            {row.map((n, j) => (
              <td
                key={j}
                className={`px-3 py-1 text-center tabular-nums ${i === j ? 'font-bold' : ''}`}
                style={{ backgroundColor: `rgba(95, 198, 179, ${(0.6 * n) / max})` }}
              >
                {n}
              </td>
            ))}
          </tr>
        ))}
      </tbody>
    </table>
  )
}
