// /review/decoders/:decoderId — a decoder's quality: patterns as scalp maps, per-class spectra of
// its components, the cross-validation folds and the comparison of spatial methods.
import { data, Link } from 'react-router'
import type { Route } from './+types/review.decoders.$decoderId'
import { ConfusionMatrix, LineChart } from '~/components/charts'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { ColourBar, ScalpMap } from '~/components/scalp-map'
import { requireUser } from '~/server/auth.server'
import { runRecording } from '~/server/exports.server'
import { decoderReview } from '~/server/review.server'

export const meta: Route.MetaFunction = ({ data }) => [{ title: `Decoder v${data?.review.decoder.version ?? ''} · Tiller` }]

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  const { db } = context.services
  const review = await decoderReview(db, user.labId, params.decoderId, (runId) => runRecording(db, runId))
  if (!review) throw data({ message: 'No such decoder.' }, { status: 404 })
  return { review }
}

const pct = (v: number | null | undefined) => (v === null || v === undefined ? '—' : `${(v * 100).toFixed(1)} %`)

export default function DecoderReview({ loaderData }: Route.ComponentProps) {
  const { review } = loaderData
  const { decoder, model } = review
  const cv = model.cv
  const mapped = model.channels.map((name, i) => ({ name, i, pos: review.positions[i] })).filter((c) => c.pos !== null)
  const missing = model.channels.filter((_, i) => review.positions[i] === null)
  return (
    <div className="max-w-7xl">
      <PageHeader
        title={`Decoder v${decoder.version} · ${decoder.method}`}
        lead={
          <>
            Participant{' '}
            <Link className="underline" to={`/review/participants/${decoder.participantId}`}>
              {decoder.participantCode}
            </Link>{' '}
            · {model.classes.join(' vs ')} · band {model.band[0]}–{model.band[1]} Hz · epoch {model.epoch[0]}–{model.epoch[1]} s · {model.trialCount} trials · {model.channels.length} channels at{' '}
            {model.rateHz} Hz
          </>
        }
        actions={
          <>
            {decoder.sessionId ? (
              <Link className="btn-quiet" to={`/review/sessions/${decoder.sessionId}`}>
                Session
              </Link>
            ) : null}
            <a className="btn-quiet" href={`/exports/decoders/${decoder.id}.json`} download>
              Download JSON
            </a>
          </>
        }
      />
      <section className="panel mb-6" aria-labelledby="cv-h">
        <h2 id="cv-h" className="mb-3 text-lg font-bold">
          Cross-validation ({cv.k} chronological folds; spatial filter fitted inside each fold)
        </h2>
        <dl className="mb-4 grid grid-cols-2 gap-3 md:grid-cols-5">
          {[
            ['Accuracy', pct(cv.accuracy)],
            ["Cohen's kappa", cv.kappa.toFixed(3)],
            ['Chance level (α = 0.05)', pct(cv.chanceLevel)],
            ['ITR per trial', `${cv.itrBitsPerTrial.toFixed(3)} bits`],
            ['ITR per minute', `${cv.itrBitsPerMinute.toFixed(2)} bits`],
          ].map(([label, value]) => (
            <div key={label} className="rounded-md border border-ink-700 px-3 py-2">
              <dt className="text-xs text-haze">{label}</dt>
              <dd className="text-lg font-bold tabular-nums">{value}</dd>
            </div>
          ))}
        </dl>
        <div className="grid gap-6 md:grid-cols-2">
          <ConfusionMatrix classes={model.classes} confusion={cv.confusion} caption="Confusion matrix (held-out trials)" />
          <table className="table-plain">
            <caption className="mb-1 text-left text-sm text-haze">Folds</caption>
            <thead>
              <tr>
                <th>Fold</th>
                <th>Training trials</th>
                <th>Test trials</th>
                <th>Accuracy</th>
              </tr>
            </thead>
            <tbody>
              {cv.folds.map((f) => (
                <tr key={f.index}>
                  <td>{f.index + 1}</td>
                  <td>{f.trainTrials}</td>
                  <td>{f.testTrials}</td>
                  <td className="tabular-nums">{pct(f.accuracy)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      </section>

      <section className="panel mb-6" aria-labelledby="patterns-h">
        <h2 id="patterns-h" className="mb-1 text-lg font-bold">
          Patterns
        </h2>
        <p className="mb-4 text-sm text-haze">
          Forward model of each spatial filter (Haufe et al. 2014), interpolated over the montage with spherical splines (Perrin et al. 1989); each map is scaled to its own largest
          value. Seen from above, nose up.
        </p>
        {mapped.length >= 2 ? (
          <>
            <div className="flex flex-wrap gap-6">
              {model.patterns.map((pattern, k) => (
                <ScalpMap
                  key={k}
                  title={`${model.componentNames[k] ?? `component ${k + 1}`} (${model.componentBands[k]?.[0]}–${model.componentBands[k]?.[1]} Hz)`}
                  positions={mapped.map((c) => c.pos!)}
                  names={mapped.map((c) => c.name)}
                  values={mapped.map((c) => pattern[c.i])}
                  unit="µV per component unit"
                />
              ))}
            </div>
            <div className="mt-4">
              <ColourBar limitLabel="max" unit="µV per unit of component (each map scaled to its largest |value|)" />
            </div>
            {missing.length ? <p className="mt-2 text-xs text-haze">No scalp position for {missing.join(', ')}; left out of the maps.</p> : null}
          </>
        ) : (
          <p className="text-haze">The channels have no known scalp positions, so no maps can be drawn.</p>
        )}
      </section>

      <section className="panel mb-6" aria-labelledby="spectra-h">
        <h2 id="spectra-h" className="mb-1 text-lg font-bold">
          Per-class spectra
        </h2>
        <p className="mb-4 text-sm text-haze">Mean log power of the components over the training epochs, per cued class (Hann-windowed periodogram).</p>
        {review.spectra.spectra.length ? (
          <div className="grid gap-6 lg:grid-cols-2">
            {review.spectra.spectra.map((s) => (
              <div key={s.component}>
                <h3 className="mb-1 font-medium">{s.component}</h3>
                <LineChart
                  x={review.spectra.freqs}
                  series={s.perClass.map((c) => ({ label: `${c.label} (${c.trials})`, values: c.log10Power }))}
                  xLabel="frequency (Hz)"
                  yLabel="log10 power (µV²/Hz)"
                  summary={`${s.component}: spectra of ${s.perClass.map((c) => c.label).join(' and ')}`}
                />
              </div>
            ))}
          </div>
        ) : (
          <p className="text-haze">{review.spectraError ?? 'The training recording is not available.'}</p>
        )}
      </section>

      <section className="panel" aria-labelledby="comparison-h">
        <h2 id="comparison-h" className="mb-3 text-lg font-bold">
          Method comparison
        </h2>
        {review.comparison?.length ? (
          <table className="table-plain">
            <thead>
              <tr>
                <th>Method</th>
                <th>Accuracy</th>
                <th>Kappa</th>
                <th>Chance level</th>
                <th>ITR (bits/trial)</th>
                <th>Fold accuracies</th>
                <th>Components</th>
              </tr>
            </thead>
            <tbody>
              {review.comparison.map((row) => (
                <tr key={row.method} className={row.method === decoder.method ? 'font-bold' : ''}>
                  <td>{row.method}</td>
                  <td className="tabular-nums">{pct(row.accuracy)}</td>
                  <td className="tabular-nums">{row.kappa?.toFixed(3) ?? '—'}</td>
                  <td className="tabular-nums">{pct(row.chanceLevel)}</td>
                  <td className="tabular-nums">{row.itrBitsPerTrial?.toFixed(3) ?? '—'}</td>
                  <td className="tabular-nums">{row.foldAccuracy.map((a) => (a * 100).toFixed(0)).join(' · ') || (row.error ?? '—')}</td>
                  <td>{row.components}</td>
                </tr>
              ))}
            </tbody>
          </table>
        ) : (
          <p className="text-haze">No comparison was stored with this decoder.</p>
        )}
        <h3 className="mt-6 mb-2 font-medium">Other decoders of {decoder.participantCode}</h3>
        <ul className="flex flex-wrap gap-4 text-sm">
          {review.siblings.map((d) => (
            <li key={d.id}>
              {d.id === decoder.id ? (
                <span className="font-bold">
                  v{d.version} {d.method}
                </span>
              ) : (
                <Link className="underline" to={`/review/decoders/${d.id}`}>
                  v{d.version} {d.method} · {pct(d.cvAccuracy)}
                </Link>
              )}
            </li>
          ))}
        </ul>
      </section>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
