import type { Route } from './+types/invite.$token'
import { RouteError } from '~/components/route-error'
import { SetPasswordPage } from '~/components/set-password'
import { MIN_PASSWORD } from '~/lib/choices'
import { parseForm } from '~/lib/forms'
import { LinkError, linkState, newPasswordSchema, setPasswordWithLink } from '~/server/password-links.server'

// Reached from an e-mailed one-time link, signed out: the token is the credential.
export const meta: Route.MetaFunction = () => [{ title: 'Set your password · Tiller' }]
export const handle = { paper: true }

export async function loader({ context, params }: Route.LoaderArgs) {
  return { link: await linkState(context.services.db, params.token, 'invite') }
}

export async function action({ request, context, params }: Route.ActionArgs) {
  const form = parseForm(newPasswordSchema, await request.formData())
  if (!form.ok) return { errors: form.errors, done: false }
  try {
    await setPasswordWithLink(context.services.db, params.token, 'invite', form.data.password)
    return { errors: undefined, done: true }
  } catch (error) {
    if (error instanceof LinkError) return { errors: { _form: [error.message] }, done: false }
    throw error
  }
}

export default function AcceptInvitation({ loaderData, actionData }: Route.ComponentProps) {
  return <SetPasswordPage kind="invite" link={loaderData.link} result={actionData} minLength={MIN_PASSWORD} />
}

export function ErrorBoundary() {
  return <RouteError />
}
