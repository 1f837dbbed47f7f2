import { Link, useOutlet } from 'react-router'
import type { Route } from './+types/sessions.$sessionId'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { StatusBadge } from '~/components/console/status-badge'
import { DecodersPanel } from '~/components/sessions/decoders-panel'
import { DeviceTokensPanel } from '~/components/sessions/device-tokens-panel'
import { FeedbackLinkPanel } from '~/components/sessions/feedback-link-panel'
import { RunsTable } from '~/components/sessions/runs-table'
import { SessionCautions } from '~/components/sessions/session-cautions'
import { parseForm } from '~/lib/forms'
import { requireSessionAccess, requireUser } from '~/server/auth.server'
import { sessionLinkAction, sessionLinkSchema, sessionOverview } from '~/server/sessions.server'

export const meta: Route.MetaFunction = ({ data }) => [{ title: `Session ${data?.overview.participant?.code ?? ''} · Tiller` }]

const ROLES = ['operator', 'supervisor', 'developer'] as const

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: [...ROLES] })
  const session = await requireSessionAccess(context, user, params.sessionId)
  // Supervisors watch and review; run control, tokens, training and decoders are the operator's and developer's (live API roles).
  return { overview: await sessionOverview(context.services.db, session), canControl: user.role === 'operator' || user.role === 'developer' }
}

export async function action({ request, context, params }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['operator', 'developer'] })
  const session = await requireSessionAccess(context, user, params.sessionId)
  const parsed = parseForm(sessionLinkSchema, await request.formData())
  if (!parsed.ok) return { error: Object.values(parsed.errors).flat()[0] ?? 'Check the form' }
  return sessionLinkAction(context, user, session, parsed.data, new URL(request.url).origin)
}

export default function SessionPage({ loaderData }: Route.ComponentProps) {
  const outlet = useOutlet()
  if (outlet) return outlet
  const { overview, canControl } = loaderData
  const { session, participant, montage, protocol } = overview
  const finished = session.status !== 'planned' && session.status !== 'live'
  return (
    <div className="max-w-7xl">
      <PageHeader
        title={`Session · ${participant?.code ?? 'unknown participant'}`}
        lead={
          <span>
            <StatusBadge status={session.status} /> {protocol?.name} · {montage?.name} · prepared {new Date(session.createdAt).toLocaleString('en-GB')}
          </span>
        }
        actions={
          finished ? null : (
            <Link to={`/sessions/${session.id}/console`} className="btn-primary">
              Open console
            </Link>
          )
        }
      />
      <div className="grid gap-6 xl:grid-cols-[1fr_24rem]">
        <div className="min-w-0 space-y-6">
          <section aria-labelledby="runs-h" className="panel">
            <h2 id="runs-h" className="mb-3 font-bold">
              Runs
            </h2>
            <RunsTable runs={overview.runs} />
          </section>
          <DecodersPanel overview={overview} montage={montage?.channels ?? []} canChange={!finished && canControl} />
          <section aria-labelledby="notes-h" className="panel">
            <h2 id="notes-h" className="font-bold">
              Notes and annotations
            </h2>
            <p className="mt-2 whitespace-pre-wrap text-sm text-haze">{session.notes || 'No preparation notes.'}</p>
            {overview.annotations.length ? (
              <ul className="mt-3 space-y-1 text-sm">
                {overview.annotations.map((a) => (
                  <li key={a.id}>
                    <span className="text-haze">{new Date(a.createdAt).toLocaleTimeString('en-GB')}</span> {a.text} <span className="text-haze">— {a.author ?? 'unknown'}</span>
                  </li>
                ))}
              </ul>
            ) : null}
          </section>
        </div>
        <div className="space-y-6">
          <DeviceTokensPanel tokens={overview.deviceTokens} disabled={finished || !canControl} />
          <FeedbackLinkPanel sessionId={session.id} hasLink={session.hasFeedbackLink} disabled={finished || !canControl} />
          <section className="panel text-sm">
            <h2 className="font-bold">Participant</h2>
            <p className="mt-1 text-haze">
              {participant?.code} · {participant?.handedness}-handed · consent {participant?.consentStatus}
            </p>
            <p className="mt-1 text-haze">
              Classes {protocol?.classes.join(', ')} · {protocol?.trialsPerClass} trials per class · band {protocol?.band.join('–')} Hz
            </p>
          </section>
          <SessionCautions />
        </div>
      </div>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
