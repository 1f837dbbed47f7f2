import { Link } from 'react-router'
import type { Route } from './+types/sessions._index'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { StatusBadge } from '~/components/console/status-badge'
import { requireUser } from '~/server/auth.server'
import { listSessions } from '~/server/sessions.server'

export const meta: Route.MetaFunction = () => [{ title: 'Sessions · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['operator', 'supervisor', 'developer'] })
  return { canPrepare: user.role === 'operator' || user.role === 'supervisor', groups: await listSessions(context.services.db, user) }
}

type Row = Route.ComponentProps['loaderData']['groups']['live'][number]

const when = (iso: string | null) => (iso ? new Date(iso).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'short' }) : '—')

function SessionTable({ rows, empty, showConsole }: { rows: Row[]; empty: string; showConsole: boolean }) {
  if (rows.length === 0) return <p className="text-haze">{empty}</p>
  return (
    <table className="table-plain">
      <thead>
        <tr>
          <th>Participant</th>
          <th>Status</th>
          <th>Protocol</th>
          <th>Montage</th>
          <th>Runs</th>
          <th>Operator</th>
          <th>Prepared</th>
          <th>
            <span className="sr-only">Open</span>
          </th>
        </tr>
      </thead>
      <tbody>
        {rows.map((s) => (
          <tr key={s.id}>
            <td>
              <Link className="font-medium underline" to={`/sessions/${s.id}`}>
                {s.participant}
              </Link>
            </td>
            <td>
              <StatusBadge status={s.status} />
            </td>
            <td>{s.protocol}</td>
            <td>{s.montage}</td>
            <td className="tabular-nums">{s.runs}</td>
            <td>{s.operator ?? '—'}</td>
            <td>{when(s.createdAt)}</td>
            <td className="text-right">
              {showConsole ? (
                <Link className="text-brass underline" to={`/sessions/${s.id}/console`}>
                  Console
                </Link>
              ) : null}
            </td>
          </tr>
        ))}
      </tbody>
    </table>
  )
}

export default function Sessions({ loaderData }: Route.ComponentProps) {
  const { groups, canPrepare } = loaderData
  return (
    <div className="max-w-6xl">
      <PageHeader
        title="Sessions"
        lead="Every session of the lab: live now, planned, and ended."
        actions={
          canPrepare ? (
            <Link to="/sessions/new" className="btn-primary">
              Prepare a session
            </Link>
          ) : null
        }
      />
      <section aria-labelledby="live-h" className="mb-10">
        <h2 id="live-h" className="mb-3 text-lg font-bold">
          Live <span className="text-haze">({groups.live.length})</span>
        </h2>
        <SessionTable rows={groups.live} empty="No session is live." showConsole />
      </section>
      <section aria-labelledby="planned-h" className="mb-10">
        <h2 id="planned-h" className="mb-3 text-lg font-bold">
          Planned <span className="text-haze">({groups.planned.length})</span>
        </h2>
        <SessionTable rows={groups.planned} empty="Nothing planned. Prepare a session to start." showConsole />
      </section>
      <section aria-labelledby="ended-h">
        <h2 id="ended-h" className="mb-3 text-lg font-bold">
          Ended <span className="text-haze">({groups.ended.length})</span>
        </h2>
        <SessionTable rows={groups.ended} empty="No ended sessions yet." showConsole={false} />
      </section>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
