import { redirect } from 'react-router'
import type { Route } from './+types/protocols.$protocolId'
import { PageHeader } from '~/components/page'
import { ProtocolForm, protocolValues } from '~/components/protocol-form'
import { RouteError } from '~/components/route-error'
import { PROTOCOL_CLASSES } from '~/lib/choices'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { getProtocol, ProtocolInUseError, protocolSchema, saveProtocol } from '~/server/protocols.server'

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.protocol.name ?? 'Protocol'} · Tiller` }]

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator'] })
  return { canManage: user.role === 'supervisor', protocol: await getProtocol(context.services.db, user, params.protocolId) }
}

export async function action({ request, context, params }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  const formData = await request.formData()
  const classes = formData.getAll('classes').map(String)
  const form = parseForm(protocolSchema, formData)
  if (!form.ok) return { errors: form.errors, values: form.values, classes }
  try {
    const row = await saveProtocol(context.services.db, user, params.protocolId, form.data)
    throw redirect(`/protocols?saved=${encodeURIComponent(row.name)}`)
  } catch (error) {
    if (error instanceof ProtocolInUseError) return { errors: { _form: [error.message] }, values: Object.fromEntries(formData.entries()) as Record<string, string>, classes }
    throw error
  }
}

export default function Protocol({ loaderData, actionData }: Route.ComponentProps) {
  const { protocol: p, canManage } = loaderData
  const values = protocolValues(actionData ? { ...p, classes: actionData.classes } : p, actionData?.values)
  const used = p.sessions > 0
  const lead = used
    ? `Ran in ${p.sessions} session(s): its settings stay fixed so their records stay true. Changes are saved as a new protocol.`
    : canManage
      ? 'Not used by any session yet; changes apply in place.'
      : 'Read only: supervisors manage protocols.'
  return (
    <div>
      <PageHeader title={p.name} lead={lead} />
      <ProtocolForm
        values={values}
        errors={actionData?.errors}
        classes={PROTOCOL_CLASSES}
        readOnly={!canManage}
        buttons={[
          ...(used ? [] : [{ intent: 'save' as const, label: 'Save changes', primary: true }]),
          { intent: 'copy' as const, label: 'Save as a new protocol', primary: used },
        ]}
      />
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
