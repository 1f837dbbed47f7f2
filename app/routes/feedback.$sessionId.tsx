import { data, redirect } from 'react-router'
import type { Route } from './+types/feedback.$sessionId'
import { FeedbackScreen } from '~/components/feedback/feedback-screen'
import { livePaths } from '~/components/console/live-client'
import { checkFeedbackToken } from '~/live/tokens.server'
import { getUser, requireSessionAccess } from '~/server/auth.server'

export const meta: Route.MetaFunction = () => [{ title: 'Tiller' }, { name: 'robots', content: 'noindex' }]
export const handle = { bare: true }

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i

/** Opened by the session's participant account, by staff of the lab, or with a feedback link token. */
export async function loader({ request, context, params }: Route.LoaderArgs) {
  const token = new URL(request.url).searchParams.get('token')
  if (token) {
    if (!UUID.test(params.sessionId) || !(await checkFeedbackToken(context.services.db, params.sessionId, token))) {
      throw data({ message: 'This feedback link is not valid any more. Ask the operator for a new one.' }, { status: 404 })
    }
    return { streamUrl: livePaths.feedbackStream(params.sessionId, token) }
  }
  const user = await getUser(request, context)
  if (!user) throw redirect(`/sign-in?redirectTo=${encodeURIComponent(`/feedback/${params.sessionId}`)}`)
  await requireSessionAccess(context, user, params.sessionId)
  return { streamUrl: livePaths.feedbackStream(params.sessionId) }
}

export default function FeedbackView({ loaderData }: Route.ComponentProps) {
  return <FeedbackScreen streamUrl={loaderData.streamUrl} />
}

export function ErrorBoundary({ error }: Route.ErrorBoundaryProps) {
  const message =
    error && typeof error === 'object' && 'data' in error && error.data && typeof error.data === 'object' && 'message' in error.data
      ? String((error.data as { message: unknown }).message)
      : 'This screen could not be opened.'
  return (
    <main className="flex min-h-screen items-center justify-center bg-paper p-10 text-navy">
      <p className="max-w-3xl text-center text-4xl font-bold">{message}</p>
    </main>
  )
}
