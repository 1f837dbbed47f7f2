// /review/sessions/:sessionId — one session for the supervisor: runs with timelines, metrics,
// confusion matrices, trial tables, latency and signal quality; annotations; replay; sign-off.
import { useMemo, useState } from 'react'
import { data, Form, Link, useFetcher, useNavigation } from 'react-router'
import type { Route } from './+types/review.sessions.$sessionId'
import { ConfusionMatrix, HistogramChart, LineChart, TimelineChart, type TimelineBand, type TimelineMark } from '~/components/charts'
import { FieldError, PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { SignoffBadge } from '~/components/session-table'
import { parseForm } from '~/lib/forms'
import { clientIp } from '~/server/audit.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'
import { addReviewAnnotation, annotationForm, ReviewError, sessionReview, signoffForm, signOffSession, type SessionReview } from '~/server/review.server'
import type { ReplayView } from '~/server/replay.server'

export const meta: Route.MetaFunction = ({ data }) => [{ title: `Review ${data?.review.participant.code ?? ''} · Tiller` }]

const STAFF = ['supervisor', 'operator', 'developer'] as const

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: [...STAFF] })
  await requireSessionAccess(context, user, params.sessionId)
  const review = await sessionReview(context.services.db, params.sessionId)
  if (!review) throw data({ message: 'No such session.' }, { status: 404 })
  return { review, canSignOff: user.role === 'supervisor', canAnnotate: user.role !== 'developer' }
}

export async function action({ request, context, params }: Route.ActionArgs) {
  const form = await request.formData()
  const intent = form.get('intent')
  const user = await requireUser(request, context, { roles: intent === 'signoff' ? ['supervisor'] : ['supervisor', 'operator'] })
  await requireSessionAccess(context, user, params.sessionId)
  const { db } = context.services
  try {
    if (intent === 'signoff') {
      const parsed = parseForm(signoffForm, form)
      if (!parsed.ok) return data({ intent, errors: parsed.errors }, { status: 400 })
      await signOffSession(db, user, params.sessionId, parsed.data, clientIp(request))
      return { intent, ok: true as const }
    }
    if (intent === 'annotate') {
      const parsed = parseForm(annotationForm, form)
      if (!parsed.ok) return data({ intent, errors: parsed.errors }, { status: 400 })
      await addReviewAnnotation(db, user, params.sessionId, parsed.data, clientIp(request))
      return { intent, ok: true as const }
    }
  } catch (error) {
    if (error instanceof ReviewError) return data({ intent, errors: { _form: [error.message] } }, { status: 409 })
    throw error
  }
  return data({ intent, errors: { _form: ['Unknown action.'] } }, { status: 400 })
}

type Run = SessionReview['runs'][number]

const fmt = (v: number | null | undefined, digits = 2) => (v === null || v === undefined ? '—' : v.toFixed(digits))
const pct = (v: number | null | undefined) => (v === null || v === undefined ? '—' : `${(v * 100).toFixed(1)} %`)
const when = (iso: string | null) => (iso ? new Date(iso).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'short', timeZone: 'UTC' }) + ' UTC' : '—')

function Figure({ label, value, note }: { label: string; value: string; note?: string }) {
  return (
    <div className="rounded-md border border-ink-700 px-3 py-2">
      <dt className="text-xs text-haze">{label}</dt>
      <dd className="text-lg font-bold tabular-nums">{value}</dd>
      {note ? <dd className="text-xs text-haze">{note}</dd> : null}
    </div>
  )
}

function RunPanel({ run, review }: { run: Run; review: SessionReview }) {
  const classes = review.protocol.classes
  const rate = run.rateHz ?? 1
  const bands: TimelineBand[] = useMemo(
    () =>
      run.trials
        .filter((t) => t.cueSample !== null)
        .map((t) => ({ fromSeconds: (t.cueSample as number) / rate, toSeconds: ((t.endSample ?? (t.cueSample as number) + 4 * rate) as number) / rate, classIndex: Math.max(0, classes.indexOf(t.label)), label: t.label })),
    [run, rate, classes],
  )
  const marks: TimelineMark[] = useMemo(
    () => [
      ...review.annotations.filter((a) => a.runId === run.id && a.sample !== null).map((a) => ({ atSeconds: (a.sample as number) / rate, label: a.text, kind: 'annotation' as const })),
      ...review.events.filter((e) => e.runId === run.id && e.sample !== null).map((e) => ({ atSeconds: (e.sample as number) / rate, label: e.kind, kind: 'event' as const })),
    ],
    [review, run, rate],
  )
  const seconds = useMemo(() => run.timeline.sample.map((s) => s / rate), [run, rate])
  const m = run.metrics
  const runEvents = review.events.filter((e) => e.runId === run.id)
  return (
    <section className="panel mb-6" aria-labelledby={`run-${run.id}`}>
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <h2 id={`run-${run.id}`} className="text-lg font-bold">
          Run {run.index} · {run.kind} run
        </h2>
        <p className="text-sm text-haze">
          {run.status} · {run.source} · {run.rateHz ?? '—'} Hz · {run.channels.length} channels · {(run.sampleCount / rate).toFixed(0)} s ·{' '}
          {run.decoder ? (
            <Link className="underline" to={`/review/decoders/${run.decoder.id}`}>
              decoder v{run.decoder.version} ({run.decoder.method})
            </Link>
          ) : (
            'no decoder'
          )}
        </p>
      </div>
      {m ? (
        <dl className="mt-4 grid grid-cols-2 gap-3 md:grid-cols-6">
          <Figure label="Accuracy" value={pct(m.accuracy)} note={`${m.decided} decided trials`} />
          <Figure label="Cohen's kappa" value={fmt(m.kappa, 3)} />
          <Figure label="Chance level (α = 0.05)" value={pct(m.chanceLevel)} />
          <Figure label="ITR per trial" value={`${fmt(m.itrBitsPerTrial, 3)} bits`} />
          <Figure label="ITR per minute" value={`${fmt(m.itrBitsPerMinute, 2)} bits`} note={`${fmt(m.secondsPerTrial, 1)} s per trial`} />
          <Figure label="Timeouts" value={String(m.timeouts)} />
        </dl>
      ) : run.kind === 'feedback' ? (
        <p className="mt-3 text-haze">No trial of this run has a decided class yet.</p>
      ) : (
        <p className="mt-3 text-haze">
          Calibration run: {run.trials.length} cued trials ({classes.map((c) => `${run.trials.filter((t) => t.label === c).length} ${c}`).join(', ')}). Decoder figures are on the decoder
          pages.
        </p>
      )}
      {run.decisionCount > 0 ? (
        <div className="mt-5">
          <h3 className="mb-2 font-medium">Timeline</h3>
          <p className="mb-2 text-xs text-haze">
            Bands: cued imagery ({classes.map((c, i) => `${c} ${['blue', 'brass', 'sea', 'rust'][i] ?? ''}`).join(', ')}); solid lines: annotations; dashed: device events.
            {run.decisionCount > run.timeline.sample.length ? ` Every ${Math.ceil(run.decisionCount / run.timeline.sample.length)}th of ${run.decisionCount} decisions shown.` : ''}
          </p>
          <TimelineChart seconds={seconds} output={run.timeline.output} decided={run.timeline.decided} classes={classes} bands={bands} marks={marks} />
        </div>
      ) : null}
      <div className="mt-5 grid gap-6 lg:grid-cols-2">
        {m ? <ConfusionMatrix classes={m.classes} confusion={m.confusion} caption="Confusion matrix (trials)" /> : null}
        {run.latency.count > 0 ? (
          <div>
            <h3 className="mb-1 font-medium">Decision latency</h3>
            <p className="text-xs text-haze">
              median {fmt(run.latency.p50Ms, 2)} ms · p99 {fmt(run.latency.p99Ms, 2)} ms · max {fmt(run.latency.maxMs, 2)} ms · {run.latency.count} decisions
            </p>
            <HistogramChart edges={run.latency.edgesMs} counts={run.latency.counts} xLabel="latency (ms)" />
          </div>
        ) : null}
      </div>
      {run.quality ? (
        <details className="mt-5">
          <summary className="cursor-pointer font-medium">
            Signal quality per channel ({run.quality.filter((q) => q.state !== 'good').length} of {run.quality.length} flagged)
          </summary>
          <table className="table-plain mt-2">
            <thead>
              <tr>
                <th>Channel</th>
                <th>RMS (µV)</th>
                <th>Range (µV)</th>
                <th>State</th>
              </tr>
            </thead>
            <tbody>
              {run.quality.map((q) => (
                <tr key={q.name}>
                  <td>{q.name}</td>
                  <td className="tabular-nums">{q.rmsUv.toFixed(1)}</td>
                  <td className="tabular-nums">{q.peakToPeakUv.toFixed(1)}</td>
                  <td className={q.state === 'good' ? 'text-sea' : 'text-rust'}>{q.state}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </details>
      ) : null}
      {runEvents.length ? (
        <details className="mt-3">
          <summary className="cursor-pointer font-medium">Device and run events ({runEvents.length})</summary>
          <ul className="mt-2 space-y-1 text-sm">
            {runEvents.map((e) => (
              <li key={e.id}>
                <span className="font-mono">{e.kind}</span> at {e.sample === null ? '—' : `${(e.sample / rate).toFixed(2)} s`} · {when(e.at)}{' '}
                <span className="text-haze">{JSON.stringify(e.detail)}</span>
              </li>
            ))}
          </ul>
        </details>
      ) : null}
      <details className="mt-3">
        <summary className="cursor-pointer font-medium">Trials ({run.trials.length})</summary>
        <table className="table-plain mt-2">
          <thead>
            <tr>
              <th>#</th>
              <th>Cue</th>
              <th>Onset (s)</th>
              <th>Outcome</th>
              <th>Decided</th>
            </tr>
          </thead>
          <tbody>
            {run.trials.map((t) => (
              <tr key={t.index}>
                <td>{t.index + 1}</td>
                <td>{t.label}</td>
                <td className="tabular-nums">{t.cueSample === null ? '—' : (t.cueSample / rate).toFixed(2)}</td>
                <td className={t.outcome === 'hit' ? 'text-sea' : t.outcome === 'miss' ? 'text-rust' : ''}>{t.outcome}</td>
                <td>{t.decidedClass ?? '—'}</td>
              </tr>
            ))}
          </tbody>
        </table>
      </details>
      <div className="mt-4 flex flex-wrap gap-3 text-sm">
        <a className="underline" href={`/exports/runs/${run.id}/recording.edf`} download>
          Recording (EDF+)
        </a>
        <a className="underline" href={`/exports/runs/${run.id}/decisions.csv`} download>
          Decisions (CSV)
        </a>
        <a className="underline" href={`/exports/runs/${run.id}/trials.csv`} download>
          Trials (CSV)
        </a>
      </div>
    </section>
  )
}

function ReplayPanel({ review }: { review: SessionReview }) {
  const fetcher = useFetcher<ReplayView | { message: string }>()
  const recorded = review.runs.filter((r) => r.sampleCount > 0)
  const [runId, setRunId] = useState(recorded.find((r) => r.kind === 'feedback')?.id ?? recorded[0]?.id ?? '')
  const run = review.runs.find((r) => r.id === runId)
  const [decoderId, setDecoderId] = useState(run?.decoder?.id ?? review.decoders[0]?.id ?? '')
  if (recorded.length === 0 || review.decoders.length === 0) {
    return <p className="text-haze">Replay needs a recorded run and a decoder of this participant.</p>
  }
  const result = fetcher.data && 'chart' in fetcher.data ? (fetcher.data as ReplayView) : null
  const failure = fetcher.data && 'message' in fetcher.data ? fetcher.data.message : null
  const busy = fetcher.state !== 'idle'
  return (
    <div>
      <fetcher.Form method="get" action={`/review/sessions/${review.session.id}/replay`} className="flex flex-wrap items-end gap-4">
        <div>
          <label className="label" htmlFor="replay-run">
            Run
          </label>
          <select id="replay-run" name="runId" className="field" value={runId} onChange={(e) => setRunId(e.target.value)}>
            {recorded.map((r) => (
              <option key={r.id} value={r.id}>
                Run {r.index} ({r.kind})
              </option>
            ))}
          </select>
        </div>
        <div>
          <label className="label" htmlFor="replay-decoder">
            Decoder
          </label>
          <select id="replay-decoder" name="decoderId" className="field" value={decoderId} onChange={(e) => setDecoderId(e.target.value)}>
            {review.decoders.map((d) => (
              <option key={d.id} value={d.id}>
                v{d.version} {d.method} · CV {pct(d.cvAccuracy)}
                {run?.decoder?.id === d.id ? ' (used live)' : ''}
              </option>
            ))}
          </select>
        </div>
        <button type="submit" className="btn-primary" disabled={busy}>
          {busy ? 'Replaying…' : 'Replay'}
        </button>
      </fetcher.Form>
      {failure ? (
        <p role="alert" className="mt-3 text-rust">
          {failure}
        </p>
      ) : null}
      {result ? <ReplayResultView result={result} /> : null}
    </div>
  )
}

function ReplayResultView({ result }: { result: ReplayView }) {
  const c = result.comparison
  const rate = result.rateHz
  const verdict = result.sameDecoder
    ? c.identical === c.compared && c.liveOnly === 0 && c.replayOnly === 0
      ? `Replay with the live decoder reproduces the live log exactly: ${c.identical} of ${c.compared} decisions identical.`
      : `Replay with the live decoder differs from the live log: ${c.identical} of ${c.compared} identical, largest output difference ${c.maxOutputDifference.toExponential(2)}.`
    : result.alignment === 'live-decisions'
      ? `Same decided class as live in ${c.sameClass} of ${c.compared} decisions (${pct(c.compared ? c.sameClass / c.compared : null)}).`
      : `No live log for this run: the replay is read at the end of every stored chunk (${result.replayCount} outputs).`
  return (
    <div className="mt-5" aria-live="polite">
      <p role="status" className={`font-medium ${result.sameDecoder && c.identical === c.compared ? 'text-sea' : ''}`}>
        {verdict}
      </p>
      <div className="mt-3 grid gap-4 md:grid-cols-2">
        {(['live', 'replay'] as const).map((side) => {
          const m = result.metrics[side]
          return (
            <div key={side} className="rounded-md border border-ink-700 p-3">
              <h3 className="font-medium">{side === 'live' ? 'Live' : `Replay · decoder v${result.decoder.version} ${result.decoder.method}`}</h3>
              {m ? (
                <p className="mt-1 text-sm tabular-nums">
                  accuracy {pct(m.accuracy)} · kappa {fmt(m.kappa, 3)} · ITR {fmt(m.itrBitsPerTrial, 3)} bits/trial · {m.decided} decided, {m.timeouts} timeouts
                </p>
              ) : (
                <p className="mt-1 text-sm text-haze">No scored trials.</p>
              )}
            </div>
          )
        })}
      </div>
      <div className="mt-4">
        <LineChart
          x={result.chart.sample.map((s) => s / rate)}
          series={[
            { label: 'live output', values: result.chart.live },
            { label: 'replay output', values: result.chart.replay, dash: [5, 3] },
          ]}
          xLabel="time in run (s)"
          yLabel="classifier output"
          summary={`${result.chart.sample.length} points of live and replayed output`}
        />
      </div>
      <details className="mt-3" open>
        <summary className="cursor-pointer font-medium">Trials side by side</summary>
        <table className="table-plain mt-2">
          <thead>
            <tr>
              <th>#</th>
              <th>Cue</th>
              <th>Live</th>
              <th>Replay</th>
            </tr>
          </thead>
          <tbody>
            {result.trials.map((t) => (
              <tr key={t.index} className={t.live.outcome !== t.replay.outcome ? 'bg-ink-800' : ''}>
                <td>{t.index + 1}</td>
                <td>{t.label}</td>
                <td>
                  {t.live.outcome} {t.live.decidedClass ? `(${t.live.decidedClass})` : ''}
                </td>
                <td>
                  {t.replay.outcome} {t.replay.decidedClass ? `(${t.replay.decidedClass})` : ''}
                </td>
              </tr>
            ))}
          </tbody>
        </table>
      </details>
      <p className="mt-2 text-xs text-haze">Replayed in {result.elapsedMs.toFixed(0)} ms.</p>
    </div>
  )
}

export default function ReviewSession({ loaderData, actionData }: Route.ComponentProps) {
  const { review, canSignOff, canAnnotate } = loaderData
  const s = review.session
  const navigation = useNavigation()
  const errors = actionData && 'errors' in actionData ? (actionData.errors as Record<string, string[] | undefined>) : {}
  const signoffErrors = actionData?.intent === 'signoff' ? errors : {}
  const annotateErrors = actionData?.intent === 'annotate' ? errors : {}
  const signable = s.status === 'ended' || s.status === 'interrupted' || s.status === 'imported'
  return (
    <div className="max-w-7xl">
      <PageHeader
        title={`Session of ${review.participant.code}`}
        lead={
          <>
            {when(s.startedAt ?? s.createdAt)} · {review.protocol.name} · {review.montage.name} · operator {s.operatorName ?? '—'} · {s.status}
          </>
        }
        actions={
          <>
            <Link to={`/review/sessions/${s.id}/report`} className="btn-quiet">
              Printable report
            </Link>
            <Link to={`/review/participants/${review.participant.id}`} className="btn-quiet">
              Participant progress
            </Link>
          </>
        }
      />
      <section className="panel mb-6" aria-labelledby="signoff-h">
        <div className="flex flex-wrap items-center gap-3">
          <h2 id="signoff-h" className="text-lg font-bold">
            Sign-off
          </h2>
          <SignoffBadge state={s.signoffState} locked={s.lockedAt !== null} />
        </div>
        {s.signedOffAt ? (
          <p className="mt-2 text-sm">
            {s.signoffState} by {s.signedOffBy ?? '—'} on {when(s.signedOffAt)}
            {s.signoffComment ? `: “${s.signoffComment}”` : ''}. The record is locked; annotations added now are kept as corrections.
          </p>
        ) : null}
        {canSignOff ? (
          signable ? (
            <Form method="post" className="mt-4 grid max-w-2xl gap-3">
              <input type="hidden" name="intent" value="signoff" />
              <fieldset className="flex gap-6">
                <legend className="label">Decision</legend>
                <label className="flex items-center gap-2">
                  <input type="radio" name="state" value="reviewed" defaultChecked={s.signoffState !== 'flagged'} /> Reviewed
                </label>
                <label className="flex items-center gap-2">
                  <input type="radio" name="state" value="flagged" defaultChecked={s.signoffState === 'flagged'} /> Flagged
                </label>
              </fieldset>
              <FieldError id="state-error" message={signoffErrors.state} />
              <div>
                <label className="label" htmlFor="signoff-comment">
                  Comment
                </label>
                <textarea id="signoff-comment" name="comment" rows={2} className="field" aria-describedby="comment-error" defaultValue="" />
                <FieldError id="comment-error" message={signoffErrors.comment} />
              </div>
              <FieldError id="signoff-form-error" message={signoffErrors._form} />
              <div>
                <button type="submit" className="btn-primary" disabled={navigation.state !== 'idle'}>
                  {s.signedOffAt ? 'Update sign-off' : 'Sign off and lock'}
                </button>
              </div>
            </Form>
          ) : (
            <p className="mt-2 text-haze">A {s.status} session can be signed off once it has ended.</p>
          )
        ) : (
          <p className="mt-2 text-sm text-haze">Only a supervisor can sign off a session.</p>
        )}
      </section>

      {review.runs.length === 0 ? <p className="panel mb-6 text-haze">This session has no runs yet.</p> : review.runs.map((run) => <RunPanel key={run.id} run={run} review={review} />)}

      <section className="panel mb-6" aria-labelledby="replay-h">
        <h2 id="replay-h" className="mb-1 text-lg font-bold">
          Replay
        </h2>
        <p className="mb-4 text-sm text-haze">Run a recorded run again through any decoder of this participant and compare with what happened live.</p>
        <ReplayPanel review={review} />
      </section>

      <section className="panel mb-6" aria-labelledby="annotations-h">
        <h2 id="annotations-h" className="mb-3 text-lg font-bold">
          Annotations
        </h2>
        {review.annotations.length === 0 ? <p className="text-haze">None.</p> : null}
        <ul className="space-y-2">
          {review.annotations.map((a) => (
            <li key={a.id} className="text-sm">
              {a.correction ? <span className="mr-2 rounded border border-brass px-1 text-xs text-brass">correction</span> : null}
              {a.text} <span className="text-haze">— {a.authorName ?? 'unknown'}, {when(a.createdAt)}</span>
            </li>
          ))}
        </ul>
        {canAnnotate ? (
          <Form method="post" className="mt-4 flex max-w-2xl flex-wrap items-end gap-3">
            <input type="hidden" name="intent" value="annotate" />
            <div className="min-w-64 flex-1">
              <label className="label" htmlFor="annotation-text">
                {s.lockedAt ? 'Add a correction' : 'Add an annotation'}
              </label>
              <input id="annotation-text" name="text" className="field" aria-describedby="annotation-error" />
              <FieldError id="annotation-error" message={annotateErrors.text ?? annotateErrors._form} />
            </div>
            <button type="submit" className="btn-quiet">
              Add
            </button>
          </Form>
        ) : null}
      </section>
      <section className="panel" aria-labelledby="exports-h">
        <h2 id="exports-h" className="mb-2 text-lg font-bold">
          Exports
        </h2>
        <div className="flex flex-wrap gap-4 text-sm">
          <a className="underline" href={`/exports/sessions/${s.id}/decisions.csv`} download>
            All decisions (CSV)
          </a>
          <a className="underline" href={`/exports/sessions/${s.id}/trials.csv`} download>
            All trials (CSV)
          </a>
          {review.decoders.filter((d) => d.sessionId === s.id).map((d) => (
            <a key={d.id} className="underline" href={`/exports/decoders/${d.id}.json`} download>
              Decoder v{d.version} (JSON)
            </a>
          ))}
        </div>
      </section>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
