// GET /live/:sessionId/feedback — the feedback view's event stream: cue and feedback only.
// Open to the session's participant account, to staff of the lab, or with the feedback link
// token (?token=tfbk_...) the operator created for the participant's screen.
import { data, type LoaderFunctionArgs } from 'react-router'
import { requireSessionAccess, requireUser } from '~/server/auth.server'

export async function loader({ request, context, params }: LoaderFunctionArgs) {
  const sessionId = params.sessionId!
  const token = new URL(request.url).searchParams.get('token')
  if (token) {
    const ok = /^[0-9a-f-]{36}$/i.test(sessionId) && (await context.services.live.verifyFeedbackToken(sessionId, token))
    if (!ok) throw data({ message: 'This feedback link is not valid any more. Ask the operator for a new one.' }, { status: 404 })
    return context.services.live.feedbackStream(sessionId, request)
  }
  const user = await requireUser(request, context, { roles: ['participant', 'operator', 'supervisor', 'developer'], api: true })
  const session = await requireSessionAccess(context, user, sessionId)
  return context.services.live.feedbackStream(session.id, request)
}
