// Decoders of a session: train one from chosen calibration runs (the live API compares every
// spatial method with chronological cross-validation), see the comparison, the CV accuracy
// against the chance level, and the patterns on the scalp; activate one for feedback runs.
import { useEffect, useState } from 'react'
import { useRevalidator } from 'react-router'
import type { SessionOverview } from '~/server/sessions.server'
import type { TrainingInfo } from '~/live/events'
import type { Electrode } from '~/components/console/scalp'
import { ColourBar, ScalpMap } from '~/components/scalp-map'
import { StatusBadge } from '~/components/console/status-badge'
import { livePaths, postLive } from '~/components/console/live-client'

type Overview = SessionOverview
type DecoderRow = Overview['decoders'][number]

const pct = (v: number | null) => (v === null ? '—' : `${(v * 100).toFixed(1)} %`)
const fix = (v: number | null, d = 2) => (v === null ? '—' : v.toFixed(d))

const METHOD_LABEL: Record<string, string> = {
  none: 'Raw channels',
  car: 'Common average reference',
  bipolar: 'Bipolar derivations',
  'laplacian-small': 'Small Laplacian',
  'laplacian-large': 'Large Laplacian',
  pca: 'PCA',
  ica: 'ICA (FastICA)',
  csp: 'CSP',
  rcsp: 'Regularized CSP',
  'csp-ovr': 'Multi-class CSP',
  fbcsp: 'Filter-bank CSP',
}
export const methodLabel = (m: string) => METHOD_LABEL[m] ?? m

function electrodesFor(channels: string[], montage: Electrode[]): Electrode[] {
  const byName = new Map(montage.map((e) => [e.name.toLowerCase(), e]))
  return channels.map((name) => byName.get(name.toLowerCase()) ?? { name, x: 0, y: 0, z: 1 })
}

function Patterns({ decoder, montage }: { decoder: DecoderRow; montage: Electrode[] }) {
  if (!decoder.patterns.length || !decoder.channels.length) return <p className="text-sm text-haze">This decoder has no spatial patterns to show (fixed method).</p>
  const electrodes = electrodesFor(decoder.channels, montage)
  const n = decoder.patterns.length
  // The first and last components are the most discriminative for CSP (largest and smallest eigenvalues).
  const picks = n <= 4 ? decoder.patterns.map((_, i) => i) : [0, 1, n - 2, n - 1]
  // Patterns (Haufe et al. 2014) drawn with spherical splines (Perrin et al. 1989), each scaled
  // to its own largest value: the sign and spread matter, not the absolute size.
  return (
    <div>
      <div className="flex flex-wrap gap-4">
        {picks.map((i) => (
          <ScalpMap key={i} title={decoder.componentNames[i] ?? `Component ${i + 1}`} positions={electrodes} names={decoder.channels} values={decoder.patterns[i]} unit="a.u." size={130} />
        ))}
      </div>
      <div className="mt-2">
        <ColourBar limitLabel="max" unit="pattern, relative to its largest weight" />
      </div>
    </div>
  )
}

function Comparison({ rows, chosen }: { rows: DecoderRow['comparison']; chosen: string }) {
  if (!rows.length) return null
  const best = Math.max(...rows.map((r) => r.accuracy ?? -1))
  return (
    <table className="table-plain mt-2">
      <caption className="mb-1 text-left text-sm text-haze">Method comparison on the same trials and folds (chronological k-fold; W fitted inside each fold)</caption>
      <thead>
        <tr>
          <th>Method</th>
          <th>CV accuracy</th>
          <th>Kappa</th>
          <th>ITR (bits/trial)</th>
          <th>Components</th>
        </tr>
      </thead>
      <tbody>
        {rows.map((r) => (
          <tr key={r.method} className={r.method === chosen ? 'bg-ink-800' : ''}>
            <td>
              {methodLabel(r.method)}
              {r.method === chosen ? <span className="ml-2 text-xs text-brass">trained</span> : null}
              {r.accuracy !== null && r.accuracy === best ? <span className="ml-2 text-xs text-sea">best</span> : null}
            </td>
            {r.error ? (
              <td colSpan={4} className="text-haze">
                not available: {r.error}
              </td>
            ) : (
              <>
                <td className="tabular-nums">
                  <span className="inline-block h-2 rounded-sm bg-sky/70 align-middle" style={{ width: `${Math.max(2, (r.accuracy ?? 0) * 80)}px` }} aria-hidden="true" /> {pct(r.accuracy)}
                </td>
                <td className="tabular-nums">{fix(r.kappa)}</td>
                <td className="tabular-nums">{fix(r.itrBitsPerTrial)}</td>
                <td className="tabular-nums">{r.components}</td>
              </>
            )}
          </tr>
        ))}
      </tbody>
    </table>
  )
}

function TrainForm({ sessionId, runs, disabled }: { sessionId: string; runs: Overview['runs']; disabled: boolean }) {
  const usable = runs.filter((r) => r.kind === 'calibration' && r.trials > 0 && r.status !== 'running' && r.status !== 'paused')
  const [picked, setPicked] = useState<string[]>(() => usable.map((r) => r.id))
  const [method, setMethod] = useState('csp')
  const [message, setMessage] = useState<string | null>(null)
  const [training, setTraining] = useState<TrainingInfo | null>(null)
  const revalidator = useRevalidator()
  // The job runs in a worker; its state is polled (a stream opened after the job ended would
  // miss the final event).
  useEffect(() => {
    if (!training || (training.state !== 'queued' && training.state !== 'running')) return
    const timer = setInterval(async () => {
      const res = await fetch(`${livePaths.training(sessionId)}?jobId=${encodeURIComponent(training.jobId)}`, { headers: { Accept: 'application/json' } }).catch(() => null)
      if (!res?.ok) return
      const info = (await res.json()) as TrainingInfo
      setTraining(info)
      if (info.state === 'done' || info.state === 'failed') void revalidator.revalidate()
      if (info.state === 'failed') setMessage(`Training failed: ${info.error ?? 'no reason given'}`)
    }, 1000)
    return () => clearInterval(timer)
  }, [training, sessionId, revalidator])
  if (usable.length === 0) return <p className="text-sm text-haze">Record a calibration run first; its trials train the decoder.</p>
  const busy = training?.state === 'queued' || training?.state === 'running'
  return (
    <form
      className="space-y-3"
      onSubmit={async (e) => {
        e.preventDefault()
        setMessage(null)
        const reply = await postLive<TrainingInfo>(livePaths.training(sessionId), { runIds: picked, method })
        if (!reply.ok) return setMessage(reply.message)
        setTraining(reply.data)
        if (reply.data.state === 'done') void revalidator.revalidate()
      }}
    >
      <fieldset>
        <legend className="label">Calibration runs to train on</legend>
        {usable.map((r) => (
          <label key={r.id} className="mr-4 inline-flex items-center gap-2 text-sm">
            <input
              type="checkbox"
              className="h-4 w-4 accent-brass"
              checked={picked.includes(r.id)}
              onChange={(e) => setPicked((p) => (e.target.checked ? [...p, r.id] : p.filter((id) => id !== r.id)))}
            />
            Run {r.index} · {r.trials} trials
          </label>
        ))}
      </fieldset>
      <div className="flex flex-wrap items-end gap-3">
        <div>
          <label className="label" htmlFor="train-method">
            Spatial filter to train (all are compared)
          </label>
          <select id="train-method" className="field" value={method} onChange={(e) => setMethod(e.target.value)}>
            {Object.entries(METHOD_LABEL).map(([value, label]) => (
              <option key={value} value={value}>
                {label}
              </option>
            ))}
          </select>
        </div>
        <button type="submit" className="btn-primary disabled:bg-ink-700 disabled:text-haze disabled:opacity-100" disabled={disabled || busy || picked.length === 0}>
          {busy ? 'Training…' : 'Train decoder'}
        </button>
      </div>
      {busy ? (
        <p role="status" className="text-sm text-sky">
          Training {training?.state}: comparing methods with cross-validation…
        </p>
      ) : null}
      {message ? (
        <p role="alert" className="text-sm text-rust">
          {message}
        </p>
      ) : null}
    </form>
  )
}

export function DecodersPanel({ overview, montage, canChange }: { overview: Overview; montage: Electrode[]; canChange: boolean }) {
  const { session, decoders, runs } = overview
  const revalidator = useRevalidator()
  const [error, setError] = useState<string | null>(null)
  // The newest decoder starts opened; after the operator picks one, their choice stands.
  const [picked, setOpen] = useState<string | null | undefined>(undefined)
  const open = picked === undefined ? (decoders[0]?.id ?? null) : picked
  const activate = async (decoderId: string) => {
    setError(null)
    const reply = await postLive(livePaths.decoder(session.id), { decoderId })
    if (!reply.ok) setError(reply.message)
    void revalidator.revalidate()
  }
  return (
    <section aria-labelledby="decoders-h" className="panel">
      <h2 id="decoders-h" className="font-bold">
        Decoders
      </h2>
      <div className="mt-3">
        <TrainForm key={runs.map((r) => r.id + r.status).join()} sessionId={session.id} runs={runs} disabled={!canChange} />
      </div>
      {error ? (
        <p role="alert" className="mt-2 text-sm text-rust">
          {error}
        </p>
      ) : null}
      {decoders.length === 0 ? <p className="mt-4 text-sm text-haze">No decoder trained for this session yet.</p> : null}
      <ul className="mt-4 space-y-3">
        {decoders.map((d) => {
          const active = d.id === session.activeDecoderId
          return (
            <li key={d.id} className={`rounded-md border p-4 ${active ? 'border-sea/60' : 'border-ink-700'}`} data-testid="decoder">
              <div className="flex flex-wrap items-center justify-between gap-3">
                <div>
                  <span className="font-medium">
                    Version {d.version} · {methodLabel(d.method)}
                  </span>{' '}
                  {active ? <StatusBadge status="active" label="active" /> : null}
                  <span className="block text-sm text-haze">
                    CV accuracy <strong className="text-fog">{pct(d.cvAccuracy)}</strong> · kappa {fix(d.cvKappa)} · chance level {pct(d.chanceLevel)}
                    {d.trialCount ? ` · ${d.trialCount} trials` : ''}
                    {d.band ? ` · ${d.band[0]}–${d.band[1]} Hz` : ''}
                  </span>
                  {d.cvAccuracy !== null && d.chanceLevel !== null && d.cvAccuracy <= d.chanceLevel ? (
                    <span className="block text-sm text-rust">Not above chance for this number of trials: consider another calibration run.</span>
                  ) : null}
                </div>
                <div className="flex gap-2">
                  <button type="button" className="btn-quiet" onClick={() => setOpen(open === d.id ? null : d.id)} aria-expanded={open === d.id}>
                    {open === d.id ? 'Hide details' : 'Details'}
                  </button>
                  {!active && canChange ? (
                    <button type="button" className="btn-primary disabled:bg-ink-700 disabled:text-haze disabled:opacity-100" onClick={() => void activate(d.id)}>
                      Activate
                    </button>
                  ) : null}
                </div>
              </div>
              {open === d.id ? (
                <div className="mt-3 space-y-3">
                  <Patterns decoder={d} montage={montage} />
                  <Comparison rows={d.comparison} chosen={d.method} />
                </div>
              ) : null}
            </li>
          )
        })}
      </ul>
    </section>
  )
}
