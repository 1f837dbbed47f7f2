import { Link } from 'react-router'
import type { Route } from './+types/home'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { requireUser } from '~/server/auth.server'
import { homeSummary } from '~/server/home.server'

export const meta: Route.MetaFunction = () => [{ title: 'Home · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  return { user, summary: await homeSummary(context.services.db, user) }
}

const TASKS = {
  supervisor: [
    { to: '/review', label: 'Review sessions', note: 'Logs, decoder quality, sign-off' },
    { to: '/people', label: 'People and invitations', note: 'Who may do what in the lab' },
    { to: '/protocols', label: 'Protocols', note: 'Classes, timing, trial counts, band' },
  ],
  operator: [
    { to: '/sessions/new', label: 'Prepare a session', note: 'Participant, montage, protocol' },
    { to: '/sessions', label: 'Sessions', note: 'Open the console of a planned or live session' },
    { to: '/participants', label: 'Participants', note: 'Codes, consent, handedness' },
  ],
  developer: [
    { to: '/bench', label: 'Bench', note: 'Attach a simulated participant to a session' },
    { to: '/api-tokens', label: 'API tokens', note: 'Script Tiller through /api/v1' },
    { to: '/outbox', label: 'Outbox', note: 'E-mail held by the local mail server' },
  ],
} as const

export default function Home({ loaderData }: Route.ComponentProps) {
  const { user, summary } = loaderData
  const tasks = TASKS[user.role as keyof typeof TASKS]
  const figures = [
    { label: 'Participants', value: summary.participants },
    { label: 'Sessions', value: summary.sessions },
    { label: 'Awaiting sign-off', value: summary.awaitingSignoff },
    { label: 'Protocols', value: summary.protocols },
  ]
  return (
    <div className="max-w-5xl">
      <PageHeader title={`Good to see you, ${user.name.split(' ')[0]}`} lead="What the lab has on hand today." />
      <dl className="grid grid-cols-2 gap-4 md:grid-cols-4">
        {figures.map((f) => (
          <div key={f.label} className="panel">
            <dt className="text-sm text-haze">{f.label}</dt>
            <dd className="mt-1 text-3xl font-bold">{f.value}</dd>
          </div>
        ))}
      </dl>
      <h2 className="mt-10 mb-3 text-lg font-bold">Your tasks</h2>
      <ul className="grid gap-4 md:grid-cols-3">
        {tasks.map((t) => (
          <li key={t.to}>
            <Link to={t.to} className="panel block hover:border-brass">
              <span className="font-medium text-brass">{t.label}</span>
              <span className="mt-1 block text-sm text-haze">{t.note}</span>
            </Link>
          </li>
        ))}
      </ul>
      <h2 className="mt-10 mb-3 text-lg font-bold">Recent sessions</h2>
      {summary.recent.length === 0 ? (
        <p className="text-haze">No sessions yet.</p>
      ) : (
        <table className="table-plain">
          <thead>
            <tr>
              <th>Participant</th>
              <th>Status</th>
              <th>Sign-off</th>
              <th>Created</th>
            </tr>
          </thead>
          <tbody>
            {summary.recent.map((s) => (
              <tr key={s.id}>
                <td>
                  <Link className="underline" to={`/sessions/${s.id}`}>
                    {s.participant}
                  </Link>
                </td>
                <td>{s.status}</td>
                <td>{s.signoff}</td>
                <td>{new Date(s.createdAt).toLocaleString('en-GB')}</td>
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
