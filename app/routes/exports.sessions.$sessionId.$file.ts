// Browser downloads of a whole session: /exports/sessions/:sessionId/decisions.csv, trials.csv.
import type { Route } from './+types/exports.sessions.$sessionId.$file'
import { requireSessionAccess, requireUser } from '~/server/auth.server'
import { exportSessionFile } from '~/server/exports.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  const session = await requireSessionAccess(context, user, params.sessionId)
  return exportSessionFile(context, user, session, params.file, request)
}
