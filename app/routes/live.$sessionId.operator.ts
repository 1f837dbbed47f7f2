// GET /live/:sessionId/operator — the console's event stream (text/event-stream).
// First event: `snapshot`; then deltas (app/live/events.ts OperatorEvents). Resumes with Last-Event-ID.
import type { LoaderFunctionArgs } from 'react-router'
import { LIVE_WATCH_ROLES } from '~/live/route-helpers.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

export async function loader({ request, context, params }: LoaderFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_WATCH_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  return context.services.live.operatorStream(session.id, request)
}
