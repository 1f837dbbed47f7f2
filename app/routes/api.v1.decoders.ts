// GET /api/v1/decoders?participant=<id> — the lab's decoders (docs/api.md).
import type { Route } from './+types/api.v1.decoders'
import { decoderListQuery, listDecoders, parseQuery, requireApiCaller } from '~/server/api.server'

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  return Response.json(await listDecoders(context, user, parseQuery(decoderListQuery, request)))
}
