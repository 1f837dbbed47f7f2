import { Form, useNavigation } from 'react-router'
import { FormError, SelectField, TextAreaField, TextField } from '~/components/form-fields'
import type { FieldErrors } from '~/lib/forms'

export interface ParticipantValues {
  code: string
  yearOfBirth: string
  handedness: string
  consentStatus: string
  consentDate: string
  notes: string
}

export const EMPTY_PARTICIPANT: ParticipantValues = { code: '', yearOfBirth: '', handedness: 'right', consentStatus: 'pending', consentDate: '', notes: '' }

const HANDEDNESS_OPTIONS = [
  { value: 'right', label: 'Right' },
  { value: 'left', label: 'Left' },
  { value: 'ambidextrous', label: 'Ambidextrous' },
]
const CONSENT_OPTIONS = [
  { value: 'pending', label: 'Pending' },
  { value: 'given', label: 'Given' },
  { value: 'withdrawn', label: 'Withdrawn' },
]

/** The create and edit form of a participant; the server's zod schema supplies the errors. */
export function ParticipantForm({ values, errors, submitLabel }: { values: ParticipantValues; errors?: FieldErrors; submitLabel: string }) {
  const busy = useNavigation().state === 'submitting'
  return (
    <Form method="post" className="panel max-w-2xl space-y-5" noValidate>
      <FormError errors={errors} />
      <div className="grid gap-5 sm:grid-cols-2">
        <TextField name="code" label="Pseudonymous code" defaultValue={values.code} errors={errors} required autoComplete="off" hint="Letters, digits, dot, dash, underscore. Never a name or initials." />
        <TextField name="yearOfBirth" label="Year of birth (optional)" defaultValue={values.yearOfBirth} errors={errors} inputMode="numeric" placeholder="e.g. 1990" />
        <SelectField name="handedness" label="Handedness" defaultValue={values.handedness} errors={errors} options={HANDEDNESS_OPTIONS} />
        <div />
        <SelectField name="consentStatus" label="Consent status" defaultValue={values.consentStatus} errors={errors} options={CONSENT_OPTIONS} />
        <TextField name="consentDate" label="Consent date" type="date" defaultValue={values.consentDate} errors={errors} hint="Needed once consent is given or withdrawn." />
      </div>
      <TextAreaField name="notes" label="Notes" rows={4} defaultValue={values.notes} errors={errors} hint="Scheduling and practical notes. Keep identifying details out of Tiller." />
      <button type="submit" className="btn-primary" disabled={busy}>
        {busy ? 'Saving…' : submitLabel}
      </button>
    </Form>
  )
}
