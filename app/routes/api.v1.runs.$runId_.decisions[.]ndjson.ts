// GET /api/v1/runs/:runId/decisions.ndjson — the whole decision log as one JSON object per
// line, streamed from the database page by page (docs/api.md).
import type { Route } from './+types/api.v1.runs.$runId_.decisions[.]ndjson'
import { requireApiCaller, requireRunInLab } from '~/server/api.server'
import { decisionsNdjson } from '~/server/exports.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  const { run } = await requireRunInLab(context, user, params.runId)
  return new Response(decisionsNdjson(context.services.db, { runId: run.id }), { headers: { 'Content-Type': 'application/x-ndjson; charset=utf-8', 'Cache-Control': 'no-store' } })
}
