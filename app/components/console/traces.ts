// The console's scrolling traces, drawn by smoothie on canvases. Frames from the operator
// stream are appended here directly (not through React), so 64 channels at the display rate
// cost only the chart's own drawing. Created in useEffect: smoothie needs a canvas.
import { SmoothieChart, TimeSeries } from 'smoothie'
import type { BandPowerEvent, CueInfo, DecisionEvent, SignalEvent } from '~/live/events'
import { SampleClock } from './sample-clock'

const GRID = { fillStyle: '#0c1214', strokeStyle: '#1b262b', lineWidth: 1, millisPerLine: 1000, verticalSections: 0, borderVisible: false }

/** Class colours of our own, also carried by the cue glyph and the class name in the legend. */
export const CLASS_COLOURS = ['#7fb2ec', '#e3aa45', '#5fc6b3', '#c59be8']
export function classColour(classes: string[], label: string | null): string {
  const i = label ? classes.indexOf(label) : -1
  return i >= 0 ? CLASS_COLOURS[i % CLASS_COLOURS.length] : '#a3b5ba'
}

/**
 * Keeps the canvas's drawing size equal to its layout size. smoothie's own `responsive`
 * mode reads offsetWidth on every frame, which forces a layout whenever React has touched
 * the page; a ResizeObserver does the same job only when the size really changes.
 */
function fitCanvas(canvas: HTMLCanvasElement, onResize?: () => void): ResizeObserver | null {
  const apply = () => {
    const w = Math.max(1, Math.floor(canvas.clientWidth))
    const h = Math.max(1, Math.floor(canvas.clientHeight))
    if (canvas.width !== w) canvas.width = w
    if (canvas.height !== h) canvas.height = h
    onResize?.()
  }
  apply()
  if (typeof ResizeObserver === 'undefined') return null
  const observer = new ResizeObserver(apply)
  observer.observe(canvas)
  return observer
}

function millisPerPixel(canvas: HTMLCanvasElement, windowSeconds: number): number {
  return (windowSeconds * 1000) / Math.max(200, canvas.clientWidth || canvas.width)
}

/** Stacked channel traces: channel i (top first) drawn around offset (n-1-i)·scale. */
export class EegTraces {
  readonly chart: SmoothieChart
  private raw: TimeSeries[] = []
  private filtered: TimeSeries[] = []
  private baseline: Float64Array
  private shown: 'raw' | 'filtered' = 'filtered'
  private scaleUv: number
  private windowSeconds: number
  framesDrawn = 0

  constructor(
    private readonly canvas: HTMLCanvasElement,
    private readonly channels: string[],
    private readonly clock: SampleClock,
    view: { signal: 'raw' | 'filtered'; scaleUv: number; windowSeconds: number },
  ) {
    this.scaleUv = view.scaleUv
    this.windowSeconds = view.windowSeconds
    this.baseline = new Float64Array(channels.length).fill(Number.NaN)
    this.chart = new SmoothieChart({
      millisPerPixel: millisPerPixel(canvas, view.windowSeconds),
      interpolation: 'linear',
      grid: GRID,
      labels: { disabled: true },
      minValue: -this.scaleUv,
      maxValue: channels.length * this.scaleUv,
      scaleSmoothing: 1,
      responsive: false,
      enableDpiScaling: false,
    })
    for (let i = 0; i < channels.length; i++) {
      this.raw.push(new TimeSeries())
      this.filtered.push(new TimeSeries())
    }
    this.show(view.signal)
    this.resizer = fitCanvas(canvas, () => this.setWindow(this.windowSeconds))
    this.chart.streamTo(canvas, 300)
  }

  private resizer: ResizeObserver | null = null

  private offset(i: number): number {
    return (this.channels.length - 1 - i) * this.scaleUv
  }

  /** Fraction from the top of the canvas at which channel i's zero line sits (for labels). */
  laneCentre(i: number): number {
    return (i + 1) / (this.channels.length + 1)
  }

  show(which: 'raw' | 'filtered'): void {
    const stroke = which === 'raw' ? '#a3b5ba' : '#7fb2ec'
    for (const s of [...this.raw, ...this.filtered]) this.chart.removeTimeSeries(s)
    for (const s of which === 'raw' ? this.raw : this.filtered) this.chart.addTimeSeries(s, { strokeStyle: stroke, lineWidth: 1 })
    this.shown = which
  }

  setScale(scaleUv: number): void {
    if (scaleUv === this.scaleUv) return
    const old = this.scaleUv
    this.scaleUv = scaleUv
    const n = this.channels.length
    for (const set of [this.raw, this.filtered]) {
      set.forEach((series, i) => {
        const delta = (n - 1 - i) * (scaleUv - old)
        for (const point of (series as unknown as { data: [number, number][] }).data) point[1] += delta
      })
    }
    this.chart.options.minValue = -scaleUv
    this.chart.options.maxValue = n * scaleUv
  }

  setWindow(windowSeconds: number): void {
    this.windowSeconds = windowSeconds
    this.chart.options.millisPerPixel = millisPerPixel(this.canvas, windowSeconds)
  }

  push(frame: SignalEvent, deviceRateHz: number): void {
    const count = frame.raw[0]?.length ?? 0
    if (count === 0) return
    const step = deviceRateHz / frame.displayRateHz
    const lastSample = frame.firstSample + (count - 1) * step
    if (this.clock.observe(lastSample, Date.now())) {
      for (const s of [...this.raw, ...this.filtered]) s.clear()
    }
    const n = Math.min(this.channels.length, frame.raw.length)
    // Raw traces: the running mean is taken off for display only (electrode offsets and drift
    // would push a channel out of its lane); the time constant is about two seconds.
    const alpha = 1 / Math.max(1, frame.displayRateHz * 2)
    for (let c = 0; c < n; c++) {
      const offset = this.offset(c)
      const raw = frame.raw[c]
      const filt = frame.filtered?.[c]
      let mean = this.baseline[c]
      if (Number.isNaN(mean)) mean = raw[0]
      for (let i = 0; i < count; i++) {
        const t = this.clock.timeOf(frame.firstSample + i * step, 0)
        mean += alpha * (raw[i] - mean)
        this.raw[c].append(t, raw[i] - mean + offset)
        if (filt) this.filtered[c].append(t, filt[i] + offset)
      }
      this.baseline[c] = mean
    }
    this.framesDrawn++
  }

  get showing(): 'raw' | 'filtered' {
    return this.shown
  }

  stop(): void {
    this.resizer?.disconnect()
    this.chart.stop()
  }
}

/** Cue bands drawn as filled step series behind a trace: one series per class. */
class CueBands {
  private series = new Map<string, TimeSeries>()
  private on: string | null = null
  private timer: ReturnType<typeof setInterval>
  constructor(
    private readonly chart: SmoothieChart,
    private readonly classes: string[],
    private readonly low: number,
    private readonly high: number,
  ) {
    for (const label of classes) {
      const s = new TimeSeries()
      this.series.set(label, s)
      chart.addTimeSeries(s, { strokeStyle: 'rgba(0,0,0,0)', fillStyle: `${classColour(classes, label)}40`, lineWidth: 0, interpolation: 'step' })
    }
    // A step series is drawn only up to its last point: extend the band in force to now.
    this.timer = setInterval(() => this.extend(Date.now()), 100)
  }

  private extend(t: number): void {
    for (const [label, s] of this.series) s.append(t, label === this.on ? this.high : this.low)
  }

  cue(cue: CueInfo, t: number): void {
    this.on = cue.phase === 'cue' || cue.phase === 'imagery' ? cue.label : null
    this.extend(t)
  }

  stop(): void {
    clearInterval(this.timer)
  }
}

/** Classifier output (the display control signal, -1..1) with the cues behind it. */
export class OutputTraces {
  readonly chart: SmoothieChart
  private control = new TimeSeries()
  private bands: CueBands

  constructor(canvas: HTMLCanvasElement, classes: string[], private readonly clock: SampleClock, windowSeconds: number) {
    this.chart = new SmoothieChart({
      millisPerPixel: millisPerPixel(canvas, windowSeconds),
      interpolation: 'linear',
      grid: { ...GRID, verticalSections: 2 },
      labels: { fillStyle: '#a3b5ba', fontSize: 11, precision: 1 },
      minValue: -1.05,
      maxValue: 1.05,
      horizontalLines: [{ value: 0, color: '#35474e', lineWidth: 1 }],
      responsive: false,
      enableDpiScaling: false,
    })
    this.bands = new CueBands(this.chart, classes, -1.05, 1.05)
    this.chart.addTimeSeries(this.control, { strokeStyle: '#e6edef', lineWidth: 2 })
    this.resizer = fitCanvas(canvas)
    this.chart.streamTo(canvas, 300)
  }

  private resizer: ResizeObserver | null = null

  decision(d: DecisionEvent): void {
    this.control.append(this.clock.timeOf(d.sample, Date.now()), d.control)
  }

  cue(cue: CueInfo): void {
    this.bands.cue(cue, this.clock.timeOf(cue.atSample, Date.now()))
  }

  setWindow(canvas: HTMLCanvasElement, windowSeconds: number): void {
    this.chart.options.millisPerPixel = millisPerPixel(canvas, windowSeconds)
  }

  stop(): void {
    this.bands.stop()
    this.resizer?.disconnect()
    this.chart.stop()
  }
}

const COMPONENT_COLOURS = ['#7fb2ec', '#e3aa45', '#5fc6b3', '#ef7a62', '#c59be8', '#e6edef', '#9bd17a', '#f0bd62']

/** Log band power of each spatial component, on a range that follows the data. */
export class BandPowerTraces {
  readonly chart: SmoothieChart
  private series = new Map<string, TimeSeries>()

  constructor(canvas: HTMLCanvasElement, private readonly clock: SampleClock, windowSeconds: number) {
    this.chart = new SmoothieChart({
      millisPerPixel: millisPerPixel(canvas, windowSeconds),
      interpolation: 'linear',
      grid: { ...GRID, verticalSections: 2 },
      labels: { fillStyle: '#a3b5ba', fontSize: 11, precision: 1 },
      scaleSmoothing: 0.15,
      responsive: false,
      enableDpiScaling: false,
    })
    this.resizer = fitCanvas(canvas)
    this.chart.streamTo(canvas, 300)
  }

  private resizer: ResizeObserver | null = null

  /** Component names in chart order, for the legend. */
  names(): string[] {
    return [...this.series.keys()]
  }

  push(e: BandPowerEvent): string[] | null {
    let added = false
    const t = this.clock.timeOf(e.sample, Date.now())
    e.components.forEach((name, i) => {
      let s = this.series.get(name)
      if (!s) {
        s = new TimeSeries()
        this.series.set(name, s)
        this.chart.addTimeSeries(s, { strokeStyle: COMPONENT_COLOURS[(this.series.size - 1) % COMPONENT_COLOURS.length], lineWidth: 1.5 })
        added = true
      }
      s.append(t, e.values[i])
    })
    return added ? this.names() : null
  }

  setWindow(canvas: HTMLCanvasElement, windowSeconds: number): void {
    this.chart.options.millisPerPixel = millisPerPixel(canvas, windowSeconds)
  }

  stop(): void {
    this.resizer?.disconnect()
    this.chart.stop()
  }
}

export const componentColour = (i: number) => COMPONENT_COLOURS[i % COMPONENT_COLOURS.length]
