// GET /review/sessions/:sessionId/replay?runId&decoderId — replays one run of the session
// through a decoder of its participant (app/server/replay.server.ts) for the review page.
import { data } from 'react-router'
import { z } from 'zod'
import type { Route } from './+types/review.sessions.$sessionId_.replay'
import { requireSessionAccess, requireUser } from '~/server/auth.server'
import { ReplayError, replayRun, replayView } from '~/server/replay.server'

const replayQuery = z.object({ runId: z.string().uuid('Choose a run'), decoderId: z.string().uuid('Choose a decoder') })

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  await requireSessionAccess(context, user, params.sessionId)
  const parsed = replayQuery.safeParse(Object.fromEntries(new URL(request.url).searchParams))
  if (!parsed.success) return data({ message: parsed.error.issues[0].message }, { status: 400 })
  try {
    const result = await replayRun(context.services.db, user.labId, parsed.data.runId, parsed.data.decoderId, { sessionId: params.sessionId })
    return replayView(result)
  } catch (error) {
    if (error instanceof ReplayError) return data({ message: error.message }, { status: 422 })
    throw error
  }
}
