// GET /api/v1/decoders/:decoderId — one decoder with the engine's model object (docs/api.md).
import type { Route } from './+types/api.v1.decoders.$decoderId'
import { decoderSummaryJson, requireApiCaller, requireDecoderInLab } from '~/server/api.server'

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireApiCaller(request, context)
  const decoder = await requireDecoderInLab(context, user, params.decoderId)
  return Response.json({ ...decoderSummaryJson(context, decoder), comparison: decoder.comparison, model: decoder.model })
}
