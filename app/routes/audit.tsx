import type { Route } from './+types/audit'
import { PageHeader } from '~/components/page'
import { Pager } from '~/components/pager'
import { RouteError } from '~/components/route-error'
import { requireUser } from '~/server/auth.server'
import { auditPage } from '~/server/audit-log.server'
import { pageFrom } from '~/server/records.server'

export const meta: Route.MetaFunction = () => [{ title: 'Audit log · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  return auditPage(context.services.db, user, pageFrom(new URL(request.url)))
}

function detailText(detail: Record<string, unknown>): string {
  return Object.entries(detail)
    .filter(([k]) => !k.endsWith('Id'))
    .map(([k, v]) => `${k}: ${Array.isArray(v) ? v.join(', ') : String(v)}`)
    .join(' · ')
}

export default function Audit({ loaderData }: Route.ComponentProps) {
  const { rows, page, pages, total } = loaderData
  return (
    <div className="max-w-6xl">
      <PageHeader title="Audit log" lead={`Sign-ins, account changes and record changes in your lab, newest first. ${total} events.`} />
      {rows.length === 0 ? (
        <p className="panel text-haze">Nothing recorded yet.</p>
      ) : (
        <table className="table-plain">
          <thead>
            <tr>
              <th>When</th>
              <th>Who</th>
              <th>What</th>
              <th>On</th>
              <th>Details</th>
              <th>From</th>
            </tr>
          </thead>
          <tbody>
            {rows.map((r) => (
              <tr key={r.id}>
                <td className="whitespace-nowrap">
                  <time dateTime={r.at}>{new Date(r.at).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'medium' })}</time>
                </td>
                <td>{r.actorName ?? <span className="text-haze">—</span>}</td>
                <td className={`font-mono text-xs ${r.action.endsWith('.failed') || r.action.includes('deactivated') || r.action.includes('revoked') ? 'text-rust' : ''}`}>{r.action}</td>
                <td>{r.target ?? ''}</td>
                <td className="text-haze">{detailText(r.detail)}</td>
                <td className="font-mono text-xs text-haze">{r.ip ?? ''}</td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
      <Pager page={page} pages={pages} label="Audit log" />
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
