import { useState } from 'react'
import { Form, redirect, useNavigation } from 'react-router'
import type { Route } from './+types/people.invite'
import { FormError, SelectField, TextField } from '~/components/form-fields'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { INVITE_ROLES } from '~/lib/choices'
import { parseForm } from '~/lib/forms'
import { useHydrated } from '~/lib/use-hydrated'
import { requireUser } from '~/server/auth.server'
import { invite, InviteError, inviteSchema, unlinkedParticipants } from '~/server/lab-people.server'

export const meta: Route.MetaFunction = () => [{ title: 'Invite someone · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  return { participants: await unlinkedParticipants(context.services.db, user) }
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  const form = parseForm(inviteSchema, await request.formData())
  if (!form.ok) return { errors: form.errors, values: form.values }
  const { db, mail, config } = context.services
  try {
    const { user: invited } = await invite({ db, mail, publicUrl: config.publicUrl }, user, form.data)
    throw redirect(`/people?invited=${encodeURIComponent(invited.email)}`)
  } catch (error) {
    if (error instanceof InviteError) return { errors: { [error.field]: [error.message] }, values: form.data as Record<string, string> }
    throw error
  }
}

export default function Invite({ loaderData, actionData }: Route.ComponentProps) {
  const values = actionData?.values ?? {}
  const errors = actionData?.errors
  const [role, setRole] = useState(values.role ?? 'operator')
  const busy = useNavigation().state === 'submitting'
  const hydrated = useHydrated()
  return (
    <div>
      <PageHeader title="Invite someone" lead="They get an e-mail with a link to set their own password. The link works once, for 72 hours." />
      <Form method="post" className="panel max-w-xl space-y-5" noValidate>
        <FormError errors={errors} />
        <TextField name="email" label="E-mail" type="email" autoComplete="off" defaultValue={values.email ?? ''} errors={errors} />
        <TextField name="name" label="Name" defaultValue={values.name ?? ''} errors={errors} hint="For a participant, use their code, not their name." />
        <SelectField name="role" label="Role" options={INVITE_ROLES} value={role} onChange={(e) => setRole(e.currentTarget.value)} errors={errors} />
        {role === 'participant' || !hydrated ? (
          loaderData.participants.length === 0 ? (
            <p className="text-sm text-brass">Every participant already has an account, or there are none yet. Add the participant first.</p>
          ) : (
            <SelectField
              name="participantId"
              label="Participant record"
              options={[{ value: '', label: 'Choose…' }, ...loaderData.participants.map((p) => ({ value: p.id, label: `${p.code} (consent ${p.consentStatus})` }))]}
              defaultValue={values.participantId ?? ''}
              errors={errors}
              hint="For the participant role only: the account sees this participant’s own progress and feedback view, nothing else."
            />
          )
        ) : null}
        <button type="submit" className="btn-primary" disabled={busy}>
          {busy ? 'Sending…' : 'Send invitation'}
        </button>
      </Form>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
