import { Link, useSearchParams } from 'react-router'
import type { Route } from './+types/montages._index'
import { Notice } from '~/components/form-fields'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { ScalpSites } from '~/components/scalp-sites'
import { requireUser } from '~/server/auth.server'
import { listMontages } from '~/server/montages.server'

export const meta: Route.MetaFunction = () => [{ title: 'Montages · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator'] })
  return { canManage: user.role === 'supervisor', montages: await listMontages(context.services.db, user) }
}

export default function Montages({ loaderData }: Route.ComponentProps) {
  const { montages, canManage } = loaderData
  const [params] = useSearchParams()
  const saved = params.get('saved')
  return (
    <div className="max-w-6xl">
      <PageHeader
        title="Montages"
        lead="Where the electrodes sit, which one is the reference and which the ground."
        actions={
          canManage ? (
            <Link to="/montages/new" className="btn-primary">
              New montage
            </Link>
          ) : null
        }
      />
      {saved ? <Notice>Saved montage {saved}.</Notice> : null}
      {montages.length === 0 ? (
        <p className="panel text-haze">No montages yet.{canManage ? ' Start from a 10-20 preset.' : ' A supervisor adds them.'}</p>
      ) : (
        <ul className="grid gap-4 sm:grid-cols-2 lg:grid-cols-3">
          {montages.map((m) => (
            <li key={m.id}>
              <Link to={`/montages/${m.id}`} className="panel flex h-full gap-4 hover:border-brass">
                <ScalpSites channels={m.channels} reference={m.reference} ground={m.ground} title={`Sites of ${m.name}`} showLabels={false} decorative className="h-28 w-28 shrink-0" />
                <div className="min-w-0">
                  <h2 className="font-bold text-brass">{m.name}</h2>
                  <dl className="mt-1 grid grid-cols-[auto_1fr] gap-x-3 text-sm">
                    <dt className="text-haze">Channels</dt>
                    <dd>{m.channels.length}</dd>
                    <dt className="text-haze">Reference</dt>
                    <dd className="break-words">{m.reference || '—'}</dd>
                    <dt className="text-haze">Ground</dt>
                    <dd className="break-words">{m.ground || '—'}</dd>
                    <dt className="text-haze">Sessions</dt>
                    <dd>{m.sessions}</dd>
                  </dl>
                </div>
              </Link>
            </li>
          ))}
        </ul>
      )}
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
