// POST /live/:sessionId/training — trains a decoder on recorded runs (runIds, repeated field)
// with an optional spatial method (default: the best of the comparison). Answers at once with
// the job (TrainingInfo); progress and the result come as `training` events on the operator
// stream. GET ?jobId= returns a job's state; GET without it lists the runs one may train on.
import type { ActionFunctionArgs, LoaderFunctionArgs } from 'react-router'
import { z } from 'zod'
import { SPATIAL_METHODS } from '~/engine/spatial/types'
import { answer, LIVE_CONTROL_ROLES, readBody } from '~/live/route-helpers.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

const trainSchema = z.object({
  runIds: z.array(z.string().uuid()).min(1, 'choose at least one run').max(20),
  method: z.enum(SPATIAL_METHODS as [string, ...string[]]).optional(),
})

export async function loader({ request, context, params }: LoaderFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_CONTROL_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  const jobId = new URL(request.url).searchParams.get('jobId')
  if (!jobId) return answer(async () => ({ runs: await context.services.live.trainableRuns(session.id) }))
  const job = context.services.live.trainingJob(session.id, jobId)
  if (!job) return Response.json({ ok: false, message: 'no such training job' }, { status: 404 })
  return Response.json(job)
}

export async function action({ request, context, params }: ActionFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_CONTROL_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  const body = await readBody(request, trainSchema)
  return answer(() =>
    context.services.live.train(session.id, { runIds: body.runIds, method: (body.method ?? null) as never }, user),
  )
}
