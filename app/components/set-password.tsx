import { Form, Link, useNavigation } from 'react-router'
import { PaperAlert, PaperButton, PaperField } from '~/components/paper'
import type { FieldErrors } from '~/lib/forms'

interface Props {
  kind: 'invite' | 'reset'
  link: { valid: true; name: string; email: string } | { valid: false }
  result?: { errors?: FieldErrors; done?: boolean } | null
  minLength: number
}

const TEXT = {
  invite: { title: 'Welcome to Tiller', button: 'Set password', done: 'Your password is set. You can sign in now.' },
  reset: { title: 'Choose a new password', button: 'Save new password', done: 'Your new password is saved. Sign in with it.' },
}

/** The page behind an invitation or reset link: the form, the expired-link message, or the confirmation. */
export function SetPasswordPage({ kind, link, result, minLength }: Props) {
  const busy = useNavigation().state === 'submitting'
  const text = TEXT[kind]
  if (result?.done) {
    return (
      <div className="mx-auto mt-16 max-w-sm space-y-6">
        <h1 className="text-3xl font-bold">{text.title}</h1>
        <PaperAlert tone="ok">{text.done}</PaperAlert>
        <Link to="/sign-in" className="block w-full rounded-md bg-navy px-4 py-2 text-center font-medium text-paper hover:bg-[#233a52]">
          Go to sign-in
        </Link>
      </div>
    )
  }
  if (!link.valid) {
    return (
      <div className="mx-auto mt-16 max-w-sm space-y-6">
        <h1 className="text-3xl font-bold">This link no longer works</h1>
        <p className="text-navy/80">
          {kind === 'invite'
            ? 'Invitation links work once and for 72 hours. Ask a supervisor of your lab to invite you again.'
            : 'Reset links work once and for 30 minutes. Ask for a new one below.'}
        </p>
        <p className="flex gap-4 text-sm">
          <Link to="/forgot-password" className="underline">
            Ask for a reset link
          </Link>
          <Link to="/sign-in" className="underline">
            Sign in
          </Link>
        </p>
      </div>
    )
  }
  const errors = result?.errors
  return (
    <div className="mx-auto mt-16 max-w-sm">
      <h1 className="text-3xl font-bold">{text.title}</h1>
      <p className="mt-2 text-navy/80">
        {kind === 'invite' ? `Hello ${link.name}. Choose a password for ${link.email}.` : `For ${link.email}.`}
      </p>
      <Form method="post" className="mt-8 space-y-4" noValidate>
        {errors?._form ? <PaperAlert>{errors._form[0]}</PaperAlert> : null}
        {/* The e-mail lets password managers file the new password under the right account. */}
        <input type="hidden" name="username" autoComplete="username" value={link.email} />
        <PaperField name="password" label="New password" type="password" autoComplete="new-password" minLength={minLength} errors={errors} required />
        <p className="-mt-2 text-xs text-navy/80">At least {minLength} characters. A few unrelated words work well.</p>
        <PaperField name="confirm" label="The same password again" type="password" autoComplete="new-password" errors={errors} required />
        <PaperButton busy={busy}>{busy ? 'Saving…' : text.button}</PaperButton>
      </Form>
    </div>
  )
}
