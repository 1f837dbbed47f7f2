// POST /live/:sessionId/runs — run controls: intent = start | pause | resume | stop | end-session.
// GET returns the live snapshot (state without a stream). Replies are JSON.
import type { ActionFunctionArgs, LoaderFunctionArgs } from 'react-router'
import { z } from 'zod'
import { answer, LIVE_CONTROL_ROLES, LIVE_WATCH_ROLES, readBody } from '~/live/route-helpers.server'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

const runSchema = z.discriminatedUnion('intent', [
  z.object({
    intent: z.literal('start'),
    kind: z.enum(['calibration', 'feedback']),
    trialsPerClass: z.coerce.number().int().min(1).max(200).optional(),
    decisionEveryMs: z.coerce.number().int().min(0).max(10_000).optional(),
    smoothing: z.coerce.number().min(0).max(0.99).optional(),
    minShare: z.coerce.number().min(0).max(1).optional(),
  }),
  z.object({ intent: z.literal('pause') }),
  z.object({ intent: z.literal('resume') }),
  z.object({ intent: z.literal('stop') }),
  z.object({ intent: z.literal('end-session') }),
])

export async function loader({ request, context, params }: LoaderFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_WATCH_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  return answer(() => context.services.live.snapshot(session.id))
}

export async function action({ request, context, params }: ActionFunctionArgs) {
  const user = await requireUser(request, context, { roles: LIVE_CONTROL_ROLES, api: true })
  const session = await requireSessionAccess(context, user, params.sessionId!)
  const body = await readBody(request, runSchema)
  const live = context.services.live
  return answer(async () => {
    switch (body.intent) {
      case 'start':
        return { ok: true, run: await live.startRun(session.id, body, user) }
      case 'pause':
        return { ok: true, run: await live.pauseRun(session.id, user) }
      case 'resume':
        return { ok: true, run: await live.resumeRun(session.id, user) }
      case 'stop':
        return { ok: true, run: await live.stopRun(session.id, user) }
      case 'end-session':
        await live.endSession(session.id, user)
        return { ok: true }
    }
  })
}
