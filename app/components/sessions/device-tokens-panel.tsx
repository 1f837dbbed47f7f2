// Device tokens of a session: create one (the secret is shown once, here, and never again),
// see which are active, revoke them.
import { useActionData, useFetcher } from 'react-router'
import type { SessionOverview } from '~/server/sessions.server'
import { StatusBadge } from '~/components/console/status-badge'
import { CopyField } from '~/components/sessions/copy-field'

type Token = SessionOverview['deviceTokens'][number]

export function DeviceTokensPanel({ tokens, disabled }: { tokens: Token[]; disabled: boolean }) {
  const create = useFetcher<{ created?: { token: string; prefix: string; expiresAt: string }; error?: string }>()
  const revoke = useFetcher()
  // Before the page has hydrated the form posts as a document; its answer arrives as action data.
  const documentAnswer = useActionData() as { created?: { token: string; prefix: string; expiresAt: string }; error?: string } | undefined
  const created = create.data?.created ?? documentAnswer?.created
  return (
    <section aria-labelledby="tokens-h" className="panel">
      <h2 id="tokens-h" className="font-bold">
        Device tokens
      </h2>
      <p className="mt-1 text-sm text-haze">A device link (amplifier bridge or simulator) authenticates with one of these. Stored hashed; revoke when done.</p>
      <create.Form method="post" className="mt-3 flex items-end gap-2">
        <input type="hidden" name="intent" value="create-token" />
        <div>
          <label className="label" htmlFor="token-hours">
            Valid for
          </label>
          <select id="token-hours" name="hours" className="field" defaultValue="12">
            <option value="2">2 hours</option>
            <option value="12">12 hours</option>
            <option value="24">1 day</option>
            <option value="168">7 days</option>
          </select>
        </div>
        <button type="submit" className="btn-primary disabled:bg-ink-700 disabled:text-haze disabled:opacity-100" disabled={disabled || create.state !== 'idle'}>
          Create token
        </button>
      </create.Form>
      {(create.data?.error ?? documentAnswer?.error) ? (
        <p role="alert" className="mt-2 text-sm text-rust">
          {create.data?.error ?? documentAnswer?.error}
        </p>
      ) : null}
      {created ? (
        <div className="mt-3 rounded-md border border-brass/60 bg-ink-950 p-3" data-testid="new-device-token">
          <p className="text-sm text-brass">Copy this token now: it is shown only once.</p>
          <CopyField value={created.token} label="Device token" />
          <p className="mt-1 text-xs text-haze">Expires {new Date(created.expiresAt).toLocaleString('en-GB')}</p>
        </div>
      ) : null}
      {tokens.length ? (
        <ul className="mt-4 divide-y divide-ink-800 text-sm">
          {tokens.map((t) => (
            <li key={t.id} className="flex items-center justify-between gap-2 py-2">
              <span>
                <code className="text-fog">{t.prefix}…</code> <StatusBadge status={t.state} />
                <span className="block text-xs text-haze">
                  {t.lastUsedAt ? `last used ${new Date(t.lastUsedAt).toLocaleString('en-GB')}` : 'not used yet'} · expires {new Date(t.expiresAt).toLocaleString('en-GB')}
                </span>
              </span>
              {t.state === 'active' && !disabled ? (
                <revoke.Form method="post">
                  <input type="hidden" name="intent" value="revoke-token" />
                  <input type="hidden" name="tokenId" value={t.id} />
                  <button type="submit" className="btn-danger px-2 py-1 text-xs">
                    Revoke
                  </button>
                </revoke.Form>
              ) : null}
            </li>
          ))}
        </ul>
      ) : (
        <p className="mt-3 text-sm text-haze">No tokens yet.</p>
      )}
    </section>
  )
}
