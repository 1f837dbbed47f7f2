// POST /live/:sessionId/annotations — an annotation (text, optional runId and sample; default
// the run in progress). Broadcast as `annotation` on the operator stream. After sign-off it is
// stored as a correction.
import type { ActionFunctionArgs } from 'react-router'
import { z } from 'zod'
import { answer, LIVE_WATCH_ROLES, readBody } from '~/live/route-helpers.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

const annotationSchema = z.object({
  text: z.string().trim().min(1, 'write something').max(2000),
  runId: z.union([z.string().uuid(), z.literal('')]).optional(),
  sample: z.union([z.coerce.number().int().min(0), z.literal('')]).optional(),
})

export async function action({ request, context, params }: ActionFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_WATCH_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  const body = await readBody(request, annotationSchema)
  return answer(() =>
    context.services.live.addAnnotation(
      session.id,
      { text: body.text, runId: body.runId || null, sample: typeof body.sample === 'number' ? body.sample : null },
      user,
    ),
  )
}
