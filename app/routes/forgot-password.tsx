import { Form, Link, useNavigation } from 'react-router'
import type { Route } from './+types/forgot-password'
import { PaperAlert, PaperButton, PaperField } from '~/components/paper'
import { RouteError } from '~/components/route-error'
import { parseForm } from '~/lib/forms'
import { requestReset, RESET_THROTTLED, resetRequestSchema } from '~/server/password-links.server'

export const meta: Route.MetaFunction = () => [{ title: 'Forgot your password · Tiller' }]
export const handle = { paper: true }

export async function action({ request, context }: Route.ActionArgs) {
  const form = parseForm(resetRequestSchema, await request.formData())
  if (!form.ok) return { errors: form.errors, sent: false, throttled: null }
  const { db, mail, config } = context.services
  const { throttled } = await requestReset({ db, mail, publicUrl: config.publicUrl }, request, form.data.email)
  return { errors: undefined, sent: !throttled, throttled: throttled ? RESET_THROTTLED : null }
}

export default function ForgotPassword({ actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === 'submitting'
  return (
    <div className="mx-auto mt-16 max-w-sm">
      <h1 className="text-3xl font-bold">Forgot your password?</h1>
      <p className="mt-2 text-navy/80">We e-mail you a link to choose a new one. It works once, for 30 minutes.</p>
      {actionData?.sent ? (
        <div className="mt-8">
          <PaperAlert tone="ok">If that address has an active account, a reset link is on its way. Check your inbox (and, in a local setup, the lab’s outbox page).</PaperAlert>
        </div>
      ) : (
        <Form method="post" className="mt-8 space-y-4" noValidate>
          {actionData?.throttled ? <PaperAlert>{actionData.throttled}</PaperAlert> : null}
          <PaperField name="email" label="E-mail" type="email" autoComplete="username" errors={actionData?.errors} required />
          <PaperButton busy={busy}>{busy ? 'Sending…' : 'Send reset link'}</PaperButton>
        </Form>
      )}
      <p className="mt-6 text-sm">
        <Link to="/sign-in" className="underline">
          Back to sign-in
        </Link>
      </p>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
