// Scrolling multi-channel EEG: raw or band-passed, with a choice of spacing (µV between
// traces) and of seconds across the chart. Traces are stacked, one lane per channel.
import { useEffect, useRef } from 'react'
import { useConsole, useConsoleApi, useFrames } from './console-context'
import { EegTraces } from './traces'

const SCALES = [10, 20, 50, 100, 200, 500]
// Seconds across the chart. The cost of a frame grows with the points drawn (channels ×
// display rate × seconds), so the default stays short enough for 64 channels at 60 fps.
const WINDOWS = [4, 5, 8, 12]

export function EegPanel({ channels, band }: { channels: string[]; band: [number, number] }) {
  const canvas = useRef<HTMLCanvasElement>(null)
  const traces = useRef<EegTraces | null>(null)
  const { clock, store } = useConsoleApi()
  const view = useConsole((s) => s.view)
  const setView = useConsole((s) => s.setView)

  useEffect(() => {
    if (!canvas.current) return
    const t = new EegTraces(canvas.current, channels, clock, store.getState().view)
    traces.current = t
    return () => {
      t.stop()
      traces.current = null
    }
  }, [channels, clock, store])

  useEffect(() => {
    const t = traces.current
    if (!t) return
    t.show(view.signal)
    t.setScale(view.scaleUv)
    t.setWindow(view.windowSeconds)
  }, [view])

  useFrames('signal', (frame) => traces.current?.push(frame, clock.rateHz))

  const laneHeight = channels.length > 32 ? 11 : channels.length > 16 ? 16 : 24
  const height = Math.max(320, (channels.length + 1) * laneHeight)
  return (
    <section aria-labelledby="eeg-h" className="panel p-3">
      <div className="mb-2 flex flex-wrap items-center gap-x-4 gap-y-2">
        <h2 id="eeg-h" className="text-sm font-bold">
          EEG · {channels.length} channels
        </h2>
        <div role="radiogroup" aria-label="Signal shown" className="flex overflow-hidden rounded-md border border-ink-600 text-xs">
          {(['filtered', 'raw'] as const).map((k) => (
            <button
              key={k}
              type="button"
              role="radio"
              aria-checked={view.signal === k}
              onClick={() => setView({ signal: k })}
              className={`px-3 py-1 ${view.signal === k ? 'bg-ink-600 text-fog' : 'text-haze hover:bg-ink-800'}`}
            >
              {k === 'filtered' ? `Band-passed ${band[0]}–${band[1]} Hz` : 'Raw'}
            </button>
          ))}
        </div>
        <label className="flex items-center gap-2 text-xs text-haze">
          Spacing
          <select className="rounded border border-ink-600 bg-ink-950 px-1 py-0.5 text-fog" value={view.scaleUv} onChange={(e) => setView({ scaleUv: Number(e.target.value) })}>
            {SCALES.map((s) => (
              <option key={s} value={s}>
                {s} µV
              </option>
            ))}
          </select>
        </label>
        <label className="flex items-center gap-2 text-xs text-haze">
          Width
          <select className="rounded border border-ink-600 bg-ink-950 px-1 py-0.5 text-fog" value={view.windowSeconds} onChange={(e) => setView({ windowSeconds: Number(e.target.value) })}>
            {WINDOWS.map((s) => (
              <option key={s} value={s}>
                {s} s
              </option>
            ))}
          </select>
        </label>
        {view.signal === 'raw' ? <span className="text-xs text-haze">running mean removed for display</span> : null}
      </div>
      <div className="relative flex" style={{ height }}>
        <ol aria-hidden="true" className="relative w-10 shrink-0 font-mono text-haze" style={{ fontSize: laneHeight > 14 ? 11 : 9 }}>
          {channels.map((name, i) => (
            <li key={name} className="absolute right-1 -translate-y-1/2 leading-none" style={{ top: `${((i + 1) / (channels.length + 1)) * 100}%` }}>
              {name}
            </li>
          ))}
        </ol>
        <canvas ref={canvas} data-testid="eeg-canvas" className="block h-full min-w-0 flex-1" aria-label={`EEG traces of ${channels.length} channels`} role="img" />
      </div>
    </section>
  )
}
