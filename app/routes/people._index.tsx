import { Form, Link, useNavigation, useSearchParams } from 'react-router'
import type { Route } from './+types/people._index'
import { FormError, Notice } from '~/components/form-fields'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { listPeople, personStatusSchema, PersonStatusError, setPersonActive } from '~/server/lab-people.server'

export const meta: Route.MetaFunction = () => [{ title: 'People · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  return { people: await listPeople(context.services.db, user) }
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  const form = parseForm(personStatusSchema, await request.formData())
  // Hidden fields only: any problem is a tampered or stale form, reported above the table.
  if (!form.ok) return { errors: { _form: Object.values(form.errors).flat() as string[] }, done: null }
  try {
    const target = await setPersonActive(context.services.db, user, form.data.userId, form.data.intent === 'reactivate')
    return { errors: undefined, done: `${target.name} is ${form.data.intent === 'reactivate' ? 'active again' : 'deactivated; their API tokens are revoked'}.` }
  } catch (error) {
    if (error instanceof PersonStatusError) return { errors: { _form: [error.message] }, done: null }
    throw error
  }
}

const STATE_LABEL = {
  active: { text: 'Active', tone: 'text-sea' },
  invited: { text: 'Invited, no password yet', tone: 'text-brass' },
  deactivated: { text: 'Deactivated', tone: 'text-rust' },
} as const

export default function People({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === 'submitting'
  const [params] = useSearchParams()
  const invited = params.get('invited')
  return (
    <div className="max-w-6xl">
      <PageHeader
        title="People"
        lead="Everyone with an account in your lab, and what their role lets them do."
        actions={
          <Link to="/people/invite" className="btn-primary">
            Invite someone
          </Link>
        }
      />
      {invited ? <Notice>Invitation sent to {invited}. The link is valid for 72 hours.</Notice> : null}
      {actionData?.done ? <Notice>{actionData.done}</Notice> : null}
      <div className="mb-4">
        <FormError errors={actionData?.errors} />
      </div>
      <table className="table-plain">
        <thead>
          <tr>
            <th>Name</th>
            <th>E-mail</th>
            <th>Role</th>
            <th>State</th>
            <th>Last sign-in</th>
            <th>
              <span className="sr-only">Actions</span>
            </th>
          </tr>
        </thead>
        <tbody>
          {loaderData.people.map((p) => (
            <tr key={p.id} className={p.state === 'deactivated' ? 'text-haze' : undefined}>
              <td className="font-medium">
                {p.name}
                {p.self ? <span className="ml-2 text-xs text-haze">(you)</span> : null}
              </td>
              <td>{p.email}</td>
              <td className="capitalize">
                {p.role}
                {p.participantCode ? <span className="text-haze normal-case"> · {p.participantCode}</span> : null}
              </td>
              <td className={STATE_LABEL[p.state].tone}>{STATE_LABEL[p.state].text}</td>
              <td>{p.lastSignInAt ? new Date(p.lastSignInAt).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'short' }) : '—'}</td>
              <td className="text-right">
                {p.self ? null : (
                  <Form method="post">
                    <input type="hidden" name="userId" value={p.id} />
                    {p.state === 'deactivated' ? (
                      <button type="submit" name="intent" value="reactivate" className="btn-quiet" disabled={busy}>
                        Reactivate <span className="sr-only">{p.name}</span>
                      </button>
                    ) : (
                      <button type="submit" name="intent" value="deactivate" className="btn-danger" disabled={busy}>
                        Deactivate <span className="sr-only">{p.name}</span>
                      </button>
                    )}
                  </Form>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
