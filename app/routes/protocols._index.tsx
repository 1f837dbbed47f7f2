import { Link, useSearchParams } from 'react-router'
import type { Route } from './+types/protocols._index'
import { Notice } from '~/components/form-fields'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { requireUser } from '~/server/auth.server'
import { PROTOCOL_CLASSES, trialSeconds } from '~/lib/choices'
import { listProtocols } from '~/server/protocols.server'

export const meta: Route.MetaFunction = () => [{ title: 'Protocols · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator'] })
  return { canManage: user.role === 'supervisor', protocols: await listProtocols(context.services.db, user) }
}

const CLASS_LABEL = Object.fromEntries(PROTOCOL_CLASSES.map((c) => [c.value, c.label])) as Record<string, string>

export default function Protocols({ loaderData }: Route.ComponentProps) {
  const { protocols, canManage } = loaderData
  const [params] = useSearchParams()
  const saved = params.get('saved')
  return (
    <div className="max-w-6xl">
      <PageHeader
        title="Protocols"
        lead="What each trial asks of the participant, how long it lasts, and how the decoder looks at it."
        actions={
          canManage ? (
            <Link to="/protocols/new" className="btn-primary">
              New protocol
            </Link>
          ) : null
        }
      />
      {saved ? <Notice>Saved protocol {saved}.</Notice> : null}
      {protocols.length === 0 ? (
        <p className="panel text-haze">No protocols yet.</p>
      ) : (
        <table className="table-plain">
          <thead>
            <tr>
              <th>Name</th>
              <th>Classes</th>
              <th>Trials</th>
              <th>Trial length</th>
              <th>Band</th>
              <th>Training window</th>
              <th>Sessions</th>
            </tr>
          </thead>
          <tbody>
            {protocols.map((p) => {
              const t = trialSeconds(p)
              return (
                <tr key={p.id}>
                  <td>
                    <Link to={`/protocols/${p.id}`} className="font-medium text-brass underline-offset-2 hover:underline">
                      {p.name}
                    </Link>
                  </td>
                  <td>{p.classes.map((c) => CLASS_LABEL[c] ?? c).join(', ')}</td>
                  <td>
                    {p.trialsPerClass} × {p.classes.length}
                  </td>
                  <td>
                    {t.min}–{t.max} s
                  </td>
                  <td>
                    {p.bandLowHz}–{p.bandHighHz} Hz
                  </td>
                  <td>
                    {p.windowStartSeconds}–{p.windowEndSeconds} s
                  </td>
                  <td>{p.sessions}</td>
                </tr>
              )
            })}
          </tbody>
        </table>
      )}
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
