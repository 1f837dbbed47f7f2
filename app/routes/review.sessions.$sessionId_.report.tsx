// /review/sessions/:sessionId/report — the session report laid out for paper: the browser's
// print dialog saves it as PDF. Light, black-on-white, no navigation.
import { data } from 'react-router'
import type { Route } from './+types/review.sessions.$sessionId_.report'
import { RouteError } from '~/components/route-error'
import { requireSessionAccess, requireUser } from '~/server/auth.server'
import { sessionReview } from '~/server/review.server'

export const handle = { bare: true }
export const meta: Route.MetaFunction = ({ data }) => [{ title: `Session report ${data?.review.participant.code ?? ''} · Tiller` }]

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  await requireSessionAccess(context, user, params.sessionId)
  const review = await sessionReview(context.services.db, params.sessionId)
  if (!review) throw data({ message: 'No such session.' }, { status: 404 })
  return { review, printedAt: new Date().toISOString() }
}

const pct = (v: number | null | undefined) => (v === null || v === undefined ? '—' : `${(v * 100).toFixed(1)} %`)
const utc = (iso: string | null) => (iso ? `${iso.slice(0, 16).replace('T', ' ')} UTC` : '—')

export default function SessionReport({ loaderData }: Route.ComponentProps) {
  const { review, printedAt } = loaderData
  const s = review.session
  return (
    <div className="min-h-screen bg-white text-black">
      <style>{'@page { size: A4; margin: 16mm } @media print { .no-print { display: none } section { break-inside: avoid } }'}</style>
      <div className="mx-auto max-w-3xl px-8 py-8 text-sm leading-relaxed">
        <div className="no-print mb-6 flex gap-3">
          <button type="button" className="rounded border border-black px-3 py-1" onClick={() => window.print()}>
            Print or save as PDF
          </button>
          <a className="rounded border border-black px-3 py-1" href={`/review/sessions/${s.id}`}>
            Back to the review
          </a>
        </div>
        <header className="mb-6 border-b-2 border-black pb-3">
          <h1 className="text-2xl font-bold">Session report · {review.participant.code}</h1>
          <p>
            {utc(s.startedAt ?? s.createdAt)} · {review.protocol.name} ({review.protocol.classes.join(' / ')}) · montage {review.montage.name} · operator {s.operatorName ?? '—'} · status {s.status}
          </p>
          <p>
            Sign-off: <strong>{s.signoffState}</strong>
            {s.signedOffAt ? ` by ${s.signedOffBy ?? '—'} on ${utc(s.signedOffAt)}` : ''}
            {s.signoffComment ? ` — “${s.signoffComment}”` : ''}
            {s.lockedAt ? ' · record locked' : ''}
          </p>
        </header>
        {review.runs.map((run) => (
          <section key={run.id} className="mb-6">
            <h2 className="mb-1 text-lg font-bold">
              Run {run.index} · {run.kind} · {run.status}
            </h2>
            <p>
              {run.trials.length} trials · {(run.sampleCount / (run.rateHz ?? 1)).toFixed(0)} s at {run.rateHz ?? '—'} Hz, {run.channels.length} channels ·{' '}
              {run.decoder ? `decoder v${run.decoder.version} (${run.decoder.method}, CV ${pct(run.decoder.cvAccuracy)})` : 'no decoder'}
            </p>
            {run.metrics ? (
              <table className="mt-2 w-full border-collapse">
                <tbody>
                  {[
                    ['Accuracy', `${pct(run.metrics.accuracy)} of ${run.metrics.decided} decided trials (${run.metrics.timeouts} timeouts)`],
                    ['Chance level (α = 0.05, Müller-Putz et al. 2008)', pct(run.metrics.chanceLevel)],
                    ["Cohen's kappa", run.metrics.kappa.toFixed(3)],
                    ['ITR (Wolpaw et al. 2000)', `${run.metrics.itrBitsPerTrial.toFixed(3)} bits/trial, ${run.metrics.itrBitsPerMinute.toFixed(2)} bits/min`],
                    ['Confusion (cued → decided)', run.metrics.classes.map((c, i) => `${c}: ${run.metrics!.confusion[i].join(' / ')}`).join('; ')],
                    ['Decision latency', run.latency.count ? `median ${run.latency.p50Ms?.toFixed(2)} ms, p99 ${run.latency.p99Ms?.toFixed(2)} ms` : '—'],
                  ].map(([k, v]) => (
                    <tr key={k} className="border-b border-gray-300">
                      <th className="w-1/3 py-1 pr-3 text-left font-medium">{k}</th>
                      <td className="py-1">{v}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            ) : null}
            {run.quality ? (
              <p className="mt-2">
                Signal quality: {run.quality.filter((q) => q.state === 'good').length} of {run.quality.length} channels good
                {run.quality.some((q) => q.state !== 'good')
                  ? ` (${run.quality
                      .filter((q) => q.state !== 'good')
                      .map((q) => `${q.name} ${q.state}`)
                      .join(', ')})`
                  : ''}
                .
              </p>
            ) : null}
          </section>
        ))}
        <section className="mb-6">
          <h2 className="mb-1 text-lg font-bold">Annotations</h2>
          {review.annotations.length === 0 ? <p>None.</p> : null}
          <ul className="list-disc pl-5">
            {review.annotations.map((a) => (
              <li key={a.id}>
                {a.correction ? '[correction] ' : ''}
                {a.text} — {a.authorName ?? '—'}, {utc(a.createdAt)}
              </li>
            ))}
          </ul>
        </section>
        <footer className="border-t border-black pt-2 text-xs">
          Printed {utc(printedAt)} from Tiller. Tiller is not a medical device and its figures are not a diagnosis; sessions run under an approved protocol with licensed
          supervision.
        </footer>
      </div>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
