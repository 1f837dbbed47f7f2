// POST /live/:sessionId/feedback-link — intent=create returns a new feedback link token (shown
// once; the previous one stops working); intent=revoke disables the link.
import type { ActionFunctionArgs } from 'react-router'
import { z } from 'zod'
import { answer, LIVE_CONTROL_ROLES, readBody } from '~/live/route-helpers.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

const linkSchema = z.object({ intent: z.enum(['create', 'revoke']) })

export async function action({ request, context, params }: ActionFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_CONTROL_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  const body = await readBody(request, linkSchema)
  const live = context.services.live
  return answer(async () => {
    if (body.intent === 'revoke') {
      await live.revokeFeedbackLink(session.id, user)
      return { ok: true }
    }
    const token = await live.createFeedbackLink(session.id, user)
    return { ok: true, token, path: `/feedback/${session.id}?token=${encodeURIComponent(token)}` }
  })
}
