import { desc, eq } from 'drizzle-orm'
import { Link } from 'react-router'
import type { Route } from './+types/me'
import { RouteError } from '~/components/route-error'
import { participants, sessions } from '~/db/schema'
import { requireUser } from '~/server/auth.server'

export const meta: Route.MetaFunction = () => [{ title: 'My progress · Tiller' }]
export const handle = { paper: true }

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['participant'] })
  const { db } = context.services
  const [me] = user.participantId ? await db.select().from(participants).where(eq(participants.id, user.participantId)) : []
  const mine = me
    ? await db.select({ id: sessions.id, status: sessions.status, createdAt: sessions.createdAt }).from(sessions).where(eq(sessions.participantId, me.id)).orderBy(desc(sessions.createdAt))
    : []
  return { code: me?.code ?? null, participantId: me?.id ?? null, sessions: mine.map((s) => ({ ...s, createdAt: s.createdAt.toISOString() })) }
}

export default function Me({ loaderData }: Route.ComponentProps) {
  const live = loaderData.sessions.find((s) => s.status === 'live')
  return (
    <div className="mx-auto max-w-3xl py-6">
      <h1 className="text-3xl font-bold">Your sessions</h1>
      <p className="mt-2 text-navy/80">Participant {loaderData.code ?? '—'}. Here you can follow your own progress; nothing else.</p>
      {live ? (
        <Link to={`/feedback/${live.id}`} className="mt-6 inline-block rounded-md bg-navy px-5 py-3 text-lg font-medium text-paper">
          Open the feedback view for today’s session
        </Link>
      ) : null}
      {loaderData.participantId ? (
        <p className="mt-6">
          <Link to={`/review/participants/${loaderData.participantId}`} className="text-lg underline">
            See your accuracy across sessions
          </Link>
        </p>
      ) : null}
      <ul className="mt-8 space-y-2">
        {loaderData.sessions.length === 0 ? <li>No sessions yet.</li> : null}
        {loaderData.sessions.map((s) => (
          <li key={s.id} className="rounded-md border border-paper-edge bg-white px-4 py-3">
            {new Date(s.createdAt).toLocaleDateString('en-GB', { dateStyle: 'long' })} · {s.status}
          </li>
        ))}
      </ul>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
