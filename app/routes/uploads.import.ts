// POST /uploads/import — the multipart upload of a recording (app/server/uploads.server.ts).
// The upload page sends it with XMLHttpRequest (for the progress bar) and gets JSON; a plain
// form post without scripts is redirected to the imported session.
import { data, redirect } from 'react-router'
import type { Route } from './+types/uploads.import'
import { clientIp } from '~/server/audit.server'
import { requireUser } from '~/server/auth.server'
import { importRecording, parseUpload, UploadError } from '~/server/uploads.server'

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator'], api: true })
  const wantsJson = request.headers.get('X-Tiller-Upload') === 'xhr'
  try {
    const upload = await parseUpload(request)
    const result = await importRecording(context.services.db, user, upload, clientIp(request))
    if ('needsMapping' in result) return data({ ok: false as const, needsMapping: result.needsMapping, message: 'Some montage channels have other names in the file: match them below.' }, { status: 409 })
    if (!wantsJson) return redirect(`/review/sessions/${result.sessionId}`)
    return { ok: true as const, result }
  } catch (error) {
    if (error instanceof UploadError) return data({ ok: false as const, field: error.field, message: error.message }, { status: error.status })
    throw error
  }
}

export function loader() {
  return redirect('/uploads')
}
