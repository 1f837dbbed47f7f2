import { redirect } from 'react-router'
import type { Route } from './+types/participants.$participantId'
import { PageHeader } from '~/components/page'
import { ParticipantForm, type ParticipantValues } from '~/components/participant-form'
import { RouteError } from '~/components/route-error'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { DuplicateCodeError, getParticipant, participantSchema, updateParticipant } from '~/server/participants.server'

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.participant.code ?? 'Participant'} · Tiller` }]

const ROLES = ['supervisor', 'operator'] as const

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: [...ROLES] })
  return { participant: await getParticipant(context.services.db, user, params.participantId) }
}

export async function action({ request, context, params }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: [...ROLES] })
  const form = parseForm(participantSchema, await request.formData())
  if (!form.ok) return { errors: form.errors, values: form.values }
  try {
    const row = await updateParticipant(context.services.db, user, params.participantId, form.data)
    throw redirect(`/participants?saved=${encodeURIComponent(row.code)}`)
  } catch (error) {
    if (error instanceof DuplicateCodeError) return { errors: { code: [error.message] }, values: Object.fromEntries(Object.entries(form.data).map(([k, v]) => [k, String(v ?? '')])) }
    throw error
  }
}

export default function EditParticipant({ loaderData, actionData }: Route.ComponentProps) {
  const p = loaderData.participant
  const stored: ParticipantValues = {
    code: p.code,
    yearOfBirth: p.yearOfBirth == null ? '' : String(p.yearOfBirth),
    handedness: p.handedness,
    consentStatus: p.consentStatus,
    consentDate: p.consentDate ?? '',
    notes: p.notes,
  }
  const values = { ...stored, ...(actionData?.values as Partial<ParticipantValues> | undefined) }
  return (
    <div>
      <PageHeader title={`Participant ${p.code}`} lead={`Added ${new Date(p.createdAt).toLocaleDateString('en-GB', { dateStyle: 'long' })}. Changes are recorded in the audit log.`} />
      <ParticipantForm values={values} errors={actionData?.errors} submitLabel="Save changes" />
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
