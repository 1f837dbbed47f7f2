// Browser downloads of one run: /exports/runs/:runId/recording.edf (EDF+, also .bdf and .csv),
// decisions.csv and trials.csv. Staff of the run's lab only; every download is audited.
import type { Route } from './+types/exports.runs.$runId.$file'
import { requireSessionAccess, requireUser } from '~/server/auth.server'
import { exportRunFile } from '~/server/exports.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  return exportRunFile(context, user, params.runId, params.file, request, (sessionId) => requireSessionAccess(context, user, sessionId))
}
