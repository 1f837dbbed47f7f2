import { redirect } from 'react-router'
import type { Route } from './+types/protocols.new'
import { PageHeader } from '~/components/page'
import { DEFAULT_PROTOCOL, ProtocolForm, protocolValues } from '~/components/protocol-form'
import { RouteError } from '~/components/route-error'
import { PROTOCOL_CLASSES } from '~/lib/choices'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { createProtocol, protocolSchema } from '~/server/protocols.server'

export const meta: Route.MetaFunction = () => [{ title: 'New protocol · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  await requireUser(request, context, { roles: ['supervisor'] })
  return null
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  const formData = await request.formData()
  const form = parseForm(protocolSchema, formData)
  if (!form.ok) return { errors: form.errors, values: form.values, classes: formData.getAll('classes').map(String) }
  const row = await createProtocol(context.services.db, user, form.data)
  throw redirect(`/protocols?saved=${encodeURIComponent(row.name)}`)
}

export default function NewProtocol({ actionData }: Route.ComponentProps) {
  const values = actionData ? protocolValues({ ...DEFAULT_PROTOCOL, classes: actionData.classes }, actionData.values) : DEFAULT_PROTOCOL
  return (
    <div>
      <PageHeader title="New protocol" lead="Balanced cue order and jittered rests are applied when a run is scheduled." />
      <ProtocolForm values={values} errors={actionData?.errors} classes={PROTOCOL_CLASSES} buttons={[{ intent: 'save', label: 'Save protocol', primary: true }]} />
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
