// POST /live/:sessionId/decoder — activates a decoder of this participant (decoderId), or none
// (decoderId empty). Refused while a feedback run is in progress.
import type { ActionFunctionArgs } from 'react-router'
import { z } from 'zod'
import { answer, LIVE_CONTROL_ROLES, readBody } from '~/live/route-helpers.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

const decoderSchema = z.object({ decoderId: z.union([z.string().uuid(), z.literal('')]) })

export async function action({ request, context, params }: ActionFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_CONTROL_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  const body = await readBody(request, decoderSchema)
  return answer(async () => ({ ok: true, decoder: await context.services.live.activateDecoder(session.id, body.decoderId || null, user) }))
}
