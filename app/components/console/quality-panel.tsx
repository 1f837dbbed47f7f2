// Signal quality on the scalp: each electrode of the montage, good / flat / noisy.
import type { MontageChannel } from '~/db/schema'
import { QualityMap } from './scalp'
import { useConsole } from './console-context'

export function QualityPanel({ montage }: { montage: MontageChannel[] }) {
  const quality = useConsole((s) => s.quality)
  const states = Object.fromEntries(Object.entries(quality).map(([k, v]) => [k, v.state]))
  const rms = Object.fromEntries(Object.entries(quality).map(([k, v]) => [k, v.rmsUv]))
  const bad = Object.entries(quality).filter(([, v]) => v.state !== 'good')
  const known = Object.keys(quality).length > 0
  return (
    <section aria-labelledby="quality-h" className="panel p-3">
      <h2 id="quality-h" className="text-sm font-bold">
        Signal quality
      </h2>
      <div className="flex justify-center">
        <QualityMap electrodes={montage} states={states} rmsUv={rms} size={200} />
      </div>
      <ul className="flex justify-center gap-4 text-xs text-haze">
        <li className="flex items-center gap-1">
          <span className="inline-block h-2.5 w-2.5 rounded-full bg-sea" aria-hidden="true" /> good
        </li>
        <li className="flex items-center gap-1">
          <span className="inline-block h-2.5 w-2.5 rounded-full border-2 border-sky" aria-hidden="true" /> flat
        </li>
        <li className="flex items-center gap-1">
          <span className="font-bold text-rust" aria-hidden="true">
            ×
          </span>{' '}
          noisy
        </li>
      </ul>
      <p className="mt-2 text-xs" role="status" data-testid="quality-summary">
        {!known ? (
          <span className="text-haze">Waiting for the device link.</span>
        ) : bad.length === 0 ? (
          <span className="text-sea">All {Object.keys(quality).length} channels look good.</span>
        ) : (
          <span className="text-rust">
            Check {bad.map(([name, v]) => `${name} (${v.state}, ${v.rmsUv.toFixed(0)} µV)`).join(', ')}
          </span>
        )}
      </p>
    </section>
  )
}
