import { redirect } from 'react-router'
import type { Route } from './+types/participants.new'
import { PageHeader } from '~/components/page'
import { EMPTY_PARTICIPANT, ParticipantForm, type ParticipantValues } from '~/components/participant-form'
import { RouteError } from '~/components/route-error'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { createParticipant, DuplicateCodeError, participantSchema } from '~/server/participants.server'

export const meta: Route.MetaFunction = () => [{ title: 'New participant · Tiller' }]

const ROLES = ['supervisor', 'operator'] as const

export async function loader({ request, context }: Route.LoaderArgs) {
  await requireUser(request, context, { roles: [...ROLES] })
  return null
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: [...ROLES] })
  const form = parseForm(participantSchema, await request.formData())
  if (!form.ok) return { errors: form.errors, values: form.values }
  try {
    const row = await createParticipant(context.services.db, user, form.data)
    throw redirect(`/participants?saved=${encodeURIComponent(row.code)}`)
  } catch (error) {
    if (error instanceof DuplicateCodeError) return { errors: { code: [error.message] }, values: Object.fromEntries(Object.entries(form.data).map(([k, v]) => [k, String(v ?? '')])) }
    throw error
  }
}

export default function NewParticipant({ actionData }: Route.ComponentProps) {
  const values = { ...EMPTY_PARTICIPANT, ...(actionData?.values as Partial<ParticipantValues> | undefined) }
  return (
    <div>
      <PageHeader title="New participant" lead="Record the code, handedness and the state of consent before the first session." />
      <ParticipantForm values={values} errors={actionData?.errors} submitLabel="Add participant" />
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
