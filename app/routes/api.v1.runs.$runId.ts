// GET /api/v1/runs/:runId — a run with its trials and figures (docs/api.md).
import type { Route } from './+types/api.v1.runs.$runId'
import { requireApiCaller, requireRunInLab, runJson } from '~/server/api.server'
import { runFigures } from '~/server/review.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  const { run } = await requireRunInLab(context, user, params.runId)
  return Response.json({ ...runJson(context, run), ...(await runFigures(context.services.db, run.id)) })
}
