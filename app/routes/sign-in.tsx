import { Form, Link, redirect, useNavigation, useSearchParams } from 'react-router'
import type { Route } from './+types/sign-in'
import { getUser, ROLE_HOME, signIn } from '~/server/auth.server'

export const meta: Route.MetaFunction = () => [{ title: 'Sign in · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await getUser(request, context)
  if (user) throw redirect(ROLE_HOME[user.role])
  return null
}

export async function action({ request, context }: Route.ActionArgs) {
  const redirectTo = new URL(request.url).searchParams.get('redirectTo')
  return signIn(request, context, redirectTo)
}

export default function SignIn({ actionData }: Route.ComponentProps) {
  const [params] = useSearchParams()
  const busy = useNavigation().state !== 'idle'
  const error = actionData && 'error' in actionData ? actionData.error : null
  return (
    <div className="mx-auto mt-16 max-w-sm">
      <h1 className="text-3xl font-bold">Sign in</h1>
      <p className="mt-2 text-navy/80">For the lab's operators, supervisors, developers and participants.</p>
      <Form method="post" action={`/sign-in${params.toString() ? `?${params}` : ''}`} className="mt-8 space-y-4" aria-describedby={error ? 'sign-in-error' : undefined}>
        <div>
          <label htmlFor="email" className="mb-1 block text-sm font-medium">
            E-mail
          </label>
          <input id="email" name="email" type="email" autoComplete="username" required className="w-full rounded-md border border-navy/30 bg-white px-3 py-2" />
        </div>
        <div>
          <label htmlFor="password" className="mb-1 block text-sm font-medium">
            Password
          </label>
          <input id="password" name="password" type="password" autoComplete="current-password" required className="w-full rounded-md border border-navy/30 bg-white px-3 py-2" />
        </div>
        {error ? (
          <p id="sign-in-error" role="alert" className="rounded-md bg-[#fbe3dc] px-3 py-2 text-sm text-[#8a2a15]">
            {error}
          </p>
        ) : null}
        <button type="submit" disabled={busy} className="w-full rounded-md bg-navy px-4 py-2 font-medium text-paper hover:bg-[#233a52] disabled:opacity-60">
          {busy ? 'Signing in…' : 'Sign in'}
        </button>
      </Form>
      <p className="mt-6 text-sm">
        <Link to="/forgot-password" className="underline">
          Forgot your password?
        </Link>
      </p>
    </div>
  )
}
