// GET /api/v1/sessions/:sessionId — a session with its runs, sign-off and links (docs/api.md).
import type { Route } from './+types/api.v1.sessions.$sessionId'
import { requireApiCaller, sessionJson } from '~/server/api.server'
import { requireSessionAccess } from '~/server/auth.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  const session = await requireSessionAccess(context, user, params.sessionId)
  return Response.json(await sessionJson(context, session))
}
