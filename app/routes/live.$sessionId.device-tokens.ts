// Device tokens of a session. GET lists them (prefix, expiry, revoked; never the secret).
// POST intent=create (hours, default 12) returns the token once; intent=revoke (tokenId) also
// closes a device link streaming with it (4403).
import type { ActionFunctionArgs, LoaderFunctionArgs } from 'react-router'
import { z } from 'zod'
import { answer, LIVE_CONTROL_ROLES, readBody } from '~/live/route-helpers.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

const tokenSchema = z.discriminatedUnion('intent', [
  z.object({ intent: z.literal('create'), hours: z.coerce.number().min(0.01).max(168).default(12) }),
  z.object({ intent: z.literal('revoke'), tokenId: z.string().uuid() }),
])

export async function loader({ request, context, params }: LoaderFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_CONTROL_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  return answer(async () => ({ tokens: await context.services.live.listDeviceTokens(session.id) }))
}

export async function action({ request, context, params }: ActionFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_CONTROL_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  const body = await readBody(request, tokenSchema)
  const live = context.services.live
  return answer(async () => {
    if (body.intent === 'create') {
      const created = await live.createDeviceToken(session.id, user, body.hours)
      return { ok: true, id: created.id, token: created.token, prefix: created.prefix, expiresAt: created.expiresAt.toISOString() }
    }
    await live.revokeDeviceToken(session.id, body.tokenId, user)
    return { ok: true }
  })
}
