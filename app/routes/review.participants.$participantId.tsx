// /review/participants/:participantId — a participant's progress across sessions: feedback
// accuracy and Cohen's kappa per session, with the decoders' cross-validated accuracy. Staff of
// the lab see any participant; a participant sees only their own (anyone else's is a 404).
import { data, Link } from 'react-router'
import type { Route } from './+types/review.participants.$participantId'
import { LineChart } from '~/components/charts'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { requireUser } from '~/server/auth.server'
import { participantProgress } from '~/server/review.server'

export const meta: Route.MetaFunction = ({ data }) => [{ title: `Progress ${data?.progress.participant.code ?? ''} · Tiller` }]

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer', 'participant'] })
  if (user.role === 'participant' && user.participantId !== params.participantId) throw data({ message: 'No such participant.' }, { status: 404 })
  const progress = await participantProgress(context.services.db, user.labId, params.participantId)
  if (!progress) throw data({ message: 'No such participant.' }, { status: 404 })
  return { progress, staff: user.role !== 'participant' }
}

const pct = (v: number | null) => (v === null ? '—' : `${(v * 100).toFixed(1)} %`)

export default function ParticipantProgress({ loaderData }: Route.ComponentProps) {
  const { progress, staff } = loaderData
  const points = progress.points
  const scored = points.filter((p) => p.accuracy !== null)
  return (
    <div className="max-w-5xl">
      <PageHeader
        title={staff ? `Progress of ${progress.participant.code}` : 'Your progress'}
        lead={staff ? 'Feedback accuracy and kappa per session, oldest first.' : 'How often the feedback followed what you imagined, session by session. This is not a diagnosis.'}
      />
      {scored.length ? (
        <section className="panel mb-6">
          <LineChart
            x={points.map((p) => Math.floor(new Date(p.date).getTime() / 1000))}
            xIsTime
            series={[
              { label: 'feedback accuracy', values: points.map((p) => p.accuracy) },
              { label: "Cohen's kappa", values: points.map((p) => p.kappa) },
              ...(staff ? [{ label: 'decoder CV accuracy', values: points.map((p) => p.decoderCvAccuracy), dash: [4, 3] }] : []),
            ]}
            xLabel="session date"
            yLabel="accuracy / kappa"
            yRange={[-0.2, 1]}
            summary={`${scored.length} sessions with feedback; latest accuracy ${pct(scored[scored.length - 1].accuracy)}`}
          />
        </section>
      ) : (
        <p className="panel mb-6 text-haze">No feedback runs yet.</p>
      )}
      <table className="table-plain">
        <thead>
          <tr>
            <th>Date (UTC)</th>
            <th>Status</th>
            <th>Feedback trials</th>
            <th>Accuracy</th>
            <th>Kappa</th>
            <th>ITR (bits/trial)</th>
            {staff ? <th>Decoder CV accuracy</th> : null}
          </tr>
        </thead>
        <tbody>
          {points.map((p) => (
            <tr key={p.sessionId}>
              <td>
                {staff ? (
                  <Link className="underline" to={`/review/sessions/${p.sessionId}`}>
                    {new Date(p.date).toLocaleDateString('en-GB', { dateStyle: 'medium', timeZone: 'UTC' })}
                  </Link>
                ) : (
                  new Date(p.date).toLocaleDateString('en-GB', { dateStyle: 'medium', timeZone: 'UTC' })
                )}
              </td>
              <td>{p.status}</td>
              <td>{p.feedbackTrials}</td>
              <td className="tabular-nums">{pct(p.accuracy)}</td>
              <td className="tabular-nums">{p.kappa === null ? '—' : p.kappa.toFixed(3)}</td>
              <td className="tabular-nums">{p.itrBitsPerTrial === null ? '—' : p.itrBitsPerTrial.toFixed(3)}</td>
              {staff ? <td className="tabular-nums">{pct(p.decoderCvAccuracy)}</td> : null}
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
