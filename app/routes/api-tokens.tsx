import { useState } from 'react'
import { Form, useNavigation } from 'react-router'
import type { Route } from './+types/api-tokens'
import { FormError, Notice, SelectField, TextField } from '~/components/form-fields'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { API_TOKEN_EXPIRY } from '~/lib/choices'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { apiTokenActionSchema, applyApiTokenAction, listApiTokens } from '~/server/api-tokens.server'

export const meta: Route.MetaFunction = () => [{ title: 'API tokens · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['developer'] })
  return { tokens: await listApiTokens(context.services.db, user) }
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['developer'] })
  const form = parseForm(apiTokenActionSchema, await request.formData())
  if (!form.ok) return { errors: form.errors, created: null, revoked: null }
  return { errors: undefined, ...(await applyApiTokenAction(context.services.db, user, form.data)) }
}

function when(iso: string | null): string {
  return iso ? new Date(iso).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'short' }) : '—'
}

const STATE_TONE = { active: 'text-sea', expired: 'text-brass', revoked: 'text-rust' } as const

function NewToken({ name, token }: { name: string; token: string }) {
  const [copied, setCopied] = useState(false)
  return (
    <section className="panel mb-6 border-brass" aria-labelledby="new-token-heading">
      <h2 id="new-token-heading" className="font-bold text-brass">
        Token “{name}” created
      </h2>
      <p className="mt-1 text-sm text-haze">Copy it now: Tiller keeps only a hash and cannot show it again. Send it as <code className="text-fog">Authorization: Bearer &lt;token&gt;</code>.</p>
      <div className="mt-3 flex gap-2">
        <label htmlFor="new-token" className="sr-only">
          New API token
        </label>
        <input id="new-token" readOnly value={token} className="field font-mono" onFocus={(e) => e.currentTarget.select()} />
        <button
          type="button"
          className="btn-quiet shrink-0"
          onClick={() => {
            void navigator.clipboard?.writeText(token).then(() => setCopied(true))
          }}
        >
          {copied ? 'Copied' : 'Copy'}
        </button>
      </div>
    </section>
  )
}

export default function ApiTokens({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === 'submitting'
  const errors = actionData?.errors
  return (
    <div className="max-w-5xl">
      <PageHeader title="API tokens" lead="Bearer tokens for scripts and tools that use Tiller’s API as you. Only your own tokens are listed." />
      {actionData?.created ? <NewToken name={actionData.created.name} token={actionData.created.token} /> : null}
      {actionData?.revoked ? <Notice>Revoked “{actionData.revoked}”. Requests with it are refused from now on.</Notice> : null}
      <Form method="post" className="panel mb-8 flex flex-wrap items-start gap-4" noValidate>
        <input type="hidden" name="intent" value="create" />
        <div className="w-full">
          <FormError errors={errors?.intent ? { _form: errors.intent } : errors?.tokenId ? { _form: errors.tokenId } : undefined} />
        </div>
        <TextField name="name" label="Token name" errors={errors} className="w-72" placeholder="e.g. analysis notebook" />
        <SelectField name="expires" label="Expires after" options={API_TOKEN_EXPIRY} defaultValue="90" errors={errors} className="w-40" />
        <button type="submit" className="btn-primary mt-6" disabled={busy}>
          Create token
        </button>
      </Form>
      {loaderData.tokens.length === 0 ? (
        <p className="panel text-haze">No tokens yet.</p>
      ) : (
        <table className="table-plain">
          <thead>
            <tr>
              <th>Name</th>
              <th>Starts with</th>
              <th>State</th>
              <th>Created</th>
              <th>Expires</th>
              <th>Last used</th>
              <th>
                <span className="sr-only">Actions</span>
              </th>
            </tr>
          </thead>
          <tbody>
            {loaderData.tokens.map((t) => (
              <tr key={t.id}>
                <td className="font-medium">{t.name}</td>
                <td className="font-mono text-xs">{t.prefix}…</td>
                <td className={`capitalize ${STATE_TONE[t.state]}`}>{t.state}</td>
                <td>{when(t.createdAt)}</td>
                <td>{t.expiresAt ? when(t.expiresAt) : 'never'}</td>
                <td>{when(t.lastUsedAt)}</td>
                <td className="text-right">
                  {t.state === 'active' ? (
                    <Form method="post">
                      <input type="hidden" name="intent" value="revoke" />
                      <input type="hidden" name="tokenId" value={t.id} />
                      <button type="submit" className="btn-danger" disabled={busy}>
                        Revoke <span className="sr-only">{t.name}</span>
                      </button>
                    </Form>
                  ) : null}
                </td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
