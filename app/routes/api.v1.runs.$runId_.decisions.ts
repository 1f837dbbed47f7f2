// GET /api/v1/runs/:runId/decisions?after=<sample>&limit=<n> — the decision log, a page at a
// time in sample order; `next` is the URL of the following page (docs/api.md).
import type { Route } from './+types/api.v1.runs.$runId_.decisions'
import { decisionPage, decisionPageQuery, parseQuery, requireApiCaller, requireRunInLab } from '~/server/api.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  const { run } = await requireRunInLab(context, user, params.runId)
  return Response.json(await decisionPage(context, run.id, parseQuery(decisionPageQuery, request)))
}
