import { Form, Link, useSearchParams } from 'react-router'
import type { Route } from './+types/participants._index'
import { Notice } from '~/components/form-fields'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { requireUser } from '~/server/auth.server'
import { listParticipants, participantQueryFrom, type ParticipantSort } from '~/server/participants.server'

export const meta: Route.MetaFunction = () => [{ title: 'Participants · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator'] })
  const query = participantQueryFrom(new URL(request.url))
  return { query, ...(await listParticipants(context.services.db, user, query)) }
}

const COLUMNS: { key: ParticipantSort; label: string }[] = [
  { key: 'code', label: 'Code' },
  { key: 'yearOfBirth', label: 'Year of birth' },
  { key: 'handedness', label: 'Handedness' },
  { key: 'consentStatus', label: 'Consent' },
  { key: 'consentDate', label: 'Consent date' },
  { key: 'updatedAt', label: 'Last changed' },
]

const CONSENT_TONE: Record<string, string> = {
  given: 'text-sea',
  pending: 'text-brass',
  withdrawn: 'text-rust',
}

function SortHeader({ column, query }: { column: (typeof COLUMNS)[number]; query: Route.ComponentProps['loaderData']['query'] }) {
  const active = query.sort === column.key
  const nextDir = active && query.dir === 'asc' ? 'desc' : 'asc'
  const params = new URLSearchParams({ sort: column.key, dir: nextDir })
  if (query.q) params.set('q', query.q)
  return (
    <th aria-sort={active ? (query.dir === 'asc' ? 'ascending' : 'descending') : 'none'}>
      <Link to={`?${params}`} className="inline-flex items-center gap-1 hover:text-fog">
        {column.label}
        <span aria-hidden="true" className={active ? 'text-brass' : 'opacity-40'}>
          {active ? (query.dir === 'asc' ? '▲' : '▼') : '↕'}
        </span>
        <span className="sr-only">{active ? `, sorted ${query.dir === 'asc' ? 'ascending' : 'descending'}` : ', sort'}</span>
      </Link>
    </th>
  )
}

export default function Participants({ loaderData }: Route.ComponentProps) {
  const { rows, total, query } = loaderData
  const [params] = useSearchParams()
  const saved = params.get('saved')
  return (
    <div className="max-w-6xl">
      <PageHeader
        title="Participants"
        lead="Pseudonymous codes only. The key from codes to people stays outside Tiller."
        actions={
          <Link to="/participants/new" className="btn-primary">
            New participant
          </Link>
        }
      />
      {saved ? <Notice>Saved participant {saved}.</Notice> : null}
      <Form method="get" role="search" className="mb-4 flex flex-wrap items-end gap-3">
        <div className="w-72">
          <label htmlFor="q" className="label">
            Search codes and notes
          </label>
          <input id="q" name="q" type="search" defaultValue={query.q} className="field" />
        </div>
        <input type="hidden" name="sort" value={query.sort} />
        <input type="hidden" name="dir" value={query.dir} />
        <button type="submit" className="btn-quiet">
          Search
        </button>
        {query.q ? (
          <Link to={`?sort=${query.sort}&dir=${query.dir}`} className="py-2 text-sm text-haze underline hover:text-fog">
            Clear
          </Link>
        ) : null}
      </Form>
      <p className="mb-2 text-sm text-haze" aria-live="polite">
        {query.q ? `${rows.length} of ${total} participants match “${query.q}”.` : `${total} participants.`}
      </p>
      {rows.length === 0 ? (
        <p className="panel text-haze">{total === 0 ? 'No participants yet. Add the first one.' : 'Nothing matches that search.'}</p>
      ) : (
        <table className="table-plain">
          <thead>
            <tr>
              {COLUMNS.map((c) => (
                <SortHeader key={c.key} column={c} query={query} />
              ))}
              <th>Sessions</th>
            </tr>
          </thead>
          <tbody>
            {rows.map((p) => (
              <tr key={p.id} className="hover:bg-ink-900">
                <td>
                  <Link to={`/participants/${p.id}`} className="font-medium text-brass underline-offset-2 hover:underline">
                    {p.code}
                  </Link>
                </td>
                <td>{p.yearOfBirth ?? '—'}</td>
                <td className="capitalize">{p.handedness}</td>
                <td className={`capitalize ${CONSENT_TONE[p.consentStatus] ?? ''}`}>{p.consentStatus}</td>
                <td>{p.consentDate ?? '—'}</td>
                <td>{new Date(p.updatedAt).toLocaleDateString('en-GB', { dateStyle: 'medium' })}</td>
                <td>{p.sessions}</td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
