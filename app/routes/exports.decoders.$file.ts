// Browser download of a decoder as JSON: /exports/decoders/:decoderId.json.
import type { Route } from './+types/exports.decoders.$file'
import { requireUser } from '~/server/auth.server'
import { exportDecoderFile } from '~/server/exports.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  return exportDecoderFile(context, user, params.file, request)
}
