// Component band powers and the classifier output, with the cues shown as bands behind the
// output: what the decoder sees and what it decides, on the same time axis as the EEG.
import { useEffect, useRef, useState } from 'react'
import { useConsole, useConsoleApi, useFrames } from './console-context'
import { BandPowerTraces, classColour, componentColour, OutputTraces } from './traces'

export function DecoderTracesPanel({ classes }: { classes: string[] }) {
  const outCanvas = useRef<HTMLCanvasElement>(null)
  const bpCanvas = useRef<HTMLCanvasElement>(null)
  const output = useRef<OutputTraces | null>(null)
  const bandpower = useRef<BandPowerTraces | null>(null)
  const [components, setComponents] = useState<string[]>([])
  const { clock, store } = useConsoleApi()
  const windowSeconds = useConsole((s) => s.view.windowSeconds)
  const decoder = useConsole((s) => s.decoder)
  const last = useConsole((s) => s.lastDecision)

  useEffect(() => {
    if (!outCanvas.current || !bpCanvas.current) return
    const w = store.getState().view.windowSeconds
    const o = new OutputTraces(outCanvas.current, classes, clock, w)
    const b = new BandPowerTraces(bpCanvas.current, clock, w)
    output.current = o
    bandpower.current = b
    const cue = store.getState().cue
    if (cue) o.cue(cue)
    return () => {
      o.stop()
      b.stop()
      output.current = bandpower.current = null
    }
  }, [classes, clock, store])

  useEffect(() => {
    if (outCanvas.current) output.current?.setWindow(outCanvas.current, windowSeconds)
    if (bpCanvas.current) bandpower.current?.setWindow(bpCanvas.current, windowSeconds)
  }, [windowSeconds])

  useFrames('decision', (d) => output.current?.decision(d))
  useFrames('cue', (c) => output.current?.cue(c))
  useFrames('bandpower', (e) => {
    const names = bandpower.current?.push(e)
    if (names) setComponents(names)
  })

  return (
    <section aria-labelledby="decoder-traces-h" className="panel space-y-3 p-3">
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <h2 id="decoder-traces-h" className="text-sm font-bold">
          Classifier output
        </h2>
        <ul className="flex gap-3 text-xs" aria-label="Cue colours">
          {classes.map((c, i) => (
            <li key={c} className="flex items-center gap-1">
              <span className="inline-block h-2.5 w-4 rounded-sm" style={{ background: classColour(classes, c) }} aria-hidden="true" />
              {c}
              {i === classes.length - 1 && classes.length === 2 ? ' (up)' : i === 0 && classes.length === 2 ? ' (down)' : ''}
            </li>
          ))}
        </ul>
      </div>
      <canvas ref={outCanvas} data-testid="output-canvas" className="block h-28 w-full" role="img" aria-label="Classifier output over time, with cue periods behind it" />
      <p className="text-xs text-haze" aria-live="polite">
        {decoder ? `Decoder v${decoder.version} · ${decoder.method}` : 'No decoder active: outputs appear once one is activated.'}
        {last ? ` · last decision ${last.className} (p = ${last.probability.toFixed(2)}, ${last.latencyMs < 1 ? last.latencyMs.toFixed(2) : last.latencyMs.toFixed(1)} ms)` : ''}
      </p>
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <h3 className="text-sm font-bold">Component band power (log-variance)</h3>
        <ul className="flex flex-wrap gap-3 text-xs">
          {components.map((c, i) => (
            <li key={c} className="flex items-center gap-1">
              <span className="inline-block h-0.5 w-4" style={{ background: componentColour(i) }} aria-hidden="true" />
              {c}
            </li>
          ))}
        </ul>
      </div>
      <canvas ref={bpCanvas} data-testid="bandpower-canvas" className="block h-28 w-full" role="img" aria-label="Band power of each spatial component over time" />
    </section>
  )
}
