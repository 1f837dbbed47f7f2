// GET /api/v1/runs/:runId/recording?format=edf|bdf|csv — the run's raw recording with its cues
// as annotations (EDF+ by default), as the browser's export (docs/api.md).
import type { Route } from './+types/api.v1.runs.$runId_.recording'
import { parseQuery, recordingQuery, requireApiCaller } from '~/server/api.server'
import { exportRunFile } from '~/server/exports.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  const { format } = parseQuery(recordingQuery, request)
  // The lab check is in exportRunFile (requireRunInLab); the API has no per-session role beyond it.
  return exportRunFile(context, user, params.runId, `recording.${format}`, request, async () => undefined)
}
