// GET /api/v1/sessions — the lab's session log: filters, sorting, pagination (docs/api.md).
// The review table fetches this same route from the browser.
import type { Route } from './+types/api.v1.sessions'
import { parseQuery, requireApiCaller } from '~/server/api.server'
import { listSessions, sessionLogQuery } from '~/server/review.server'

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  const query = parseQuery(sessionLogQuery, request)
  return Response.json(await listSessions(context.services.db, user.labId, query))
}
