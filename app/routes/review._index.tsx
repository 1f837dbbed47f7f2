// /review — the lab's session log. The first page comes with the document; after that every
// filter, sort or page change fetches /api/v1/sessions in the browser and writes the filter
// state into the URL (replace, no loader run), so a link or a reload shows the same view.
import { useEffect, useRef, useState } from 'react'
import { Form, Link, useSearchParams, type ShouldRevalidateFunction } from 'react-router'
import type { Route } from './+types/review._index'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { SESSION_STATUSES, SessionTable, SIGNOFF_STATES } from '~/components/session-table'
import { parseForm } from '~/lib/forms'
import { clientIp } from '~/server/audit.server'
import { requireUser } from '~/server/auth.server'
import { digestSwitchForm, setWeeklyDigest, weeklyDigestEnabled } from '~/server/reports.server'
import { listSessions, parseSessionLogQuery, sessionLogFilterOptions, sessionLogQuery, type SessionLogPage } from '~/server/review.server'

export const meta: Route.MetaFunction = () => [{ title: 'Review · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator', 'developer'] })
  const { db } = context.services
  const parsed = parseSessionLogQuery(new URL(request.url).searchParams)
  // A hand-edited URL with a bad filter shows the unfiltered log and says which filter was wrong.
  const query = parsed.ok ? parsed.query : sessionLogQuery.parse({})
  const [page, options, digest] = await Promise.all([listSessions(db, user.labId, query), sessionLogFilterOptions(db, user.labId), weeklyDigestEnabled(db, user.labId)])
  return { page, options, queryErrors: parsed.ok ? null : parsed.errors, canUpload: user.role !== 'developer', supervisor: user.role === 'supervisor', digest }
}

/** The weekly digest switch (supervisors). */
export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  const parsed = parseForm(digestSwitchForm, await request.formData())
  if (!parsed.ok) return { ok: false as const }
  await setWeeklyDigest(context.services.db, user, parsed.data.enabled === 'on', clientIp(request))
  return { ok: true as const }
}

// Filter changes are fetched through the API; only a new path needs the loader again.
export const shouldRevalidate: ShouldRevalidateFunction = ({ currentUrl, nextUrl, formMethod, defaultShouldRevalidate }) =>
  formMethod !== undefined || currentUrl.pathname !== nextUrl.pathname ? defaultShouldRevalidate : false

const FILTER_KEYS = ['participant', 'operator', 'protocol', 'status', 'signoff', 'from', 'to'] as const

export default function ReviewIndex({ loaderData }: Route.ComponentProps) {
  const { options } = loaderData
  const [params, setParams] = useSearchParams()
  const [page, setPage] = useState<SessionLogPage>(loaderData.page)
  const [loading, setLoading] = useState(false)
  const [error, setError] = useState<string | null>(loaderData.queryErrors ? Object.entries(loaderData.queryErrors).map(([k, v]) => `${k}: ${v}`).join('; ') : null)
  const first = useRef(true)
  const search = params.toString()

  useEffect(() => {
    if (first.current) {
      first.current = false
      return
    }
    const controller = new AbortController()
    setLoading(true)
    fetch(`/api/v1/sessions?${search}`, { signal: controller.signal, headers: { Accept: 'application/json' } })
      .then(async (res) => {
        const body = await res.json()
        if (!res.ok) {
          const detail = body.errors ? Object.entries(body.errors as Record<string, string>).map(([k, v]) => `${k}: ${v}`).join('; ') : ''
          throw new Error(`${body.message ?? `Error ${res.status}`} ${detail}`.trim())
        }
        setPage(body as SessionLogPage)
        setError(null)
      })
      .catch((e: Error) => {
        if (e.name !== 'AbortError') setError(e.message)
      })
      .finally(() => {
        if (!controller.signal.aborted) setLoading(false)
      })
    return () => controller.abort()
  }, [search])

  function update(changes: Record<string, string | null>, resetPage = true) {
    const next = new URLSearchParams(params)
    for (const [key, value] of Object.entries(changes)) {
      if (value === null || value === '') next.delete(key)
      else next.set(key, value)
    }
    if (resetPage) next.delete('page')
    setParams(next, { replace: true, preventScrollReset: true })
  }

  const select = (key: (typeof FILTER_KEYS)[number], label: string, choices: { id: string; label: string }[]) => (
    <div>
      <label className="label" htmlFor={`f-${key}`}>
        {label}
      </label>
      <select id={`f-${key}`} className="field" value={params.get(key) ?? ''} onChange={(e) => update({ [key]: e.target.value })}>
        <option value="">All</option>
        {choices.map((c) => (
          <option key={c.id} value={c.id}>
            {c.label}
          </option>
        ))}
      </select>
    </div>
  )
  const hasFilters = FILTER_KEYS.some((k) => params.get(k))

  return (
    <div className="max-w-7xl">
      <PageHeader
        title="Review"
        lead="Every session of the lab: find one, open its review, sign it off."
        actions={
          <>
            {loaderData.supervisor ? (
              <Form method="post" className="flex items-center">
                <input type="hidden" name="intent" value="weekly-digest" />
                <input type="hidden" name="enabled" value={loaderData.digest ? 'off' : 'on'} />
                <button type="submit" className="btn-quiet" aria-pressed={loaderData.digest}>
                  Weekly digest e-mail: {loaderData.digest ? 'on' : 'off'}
                </button>
              </Form>
            ) : null}
            {loaderData.canUpload ? (
              <Link to="/uploads" className="btn-quiet">
                Import a recording
              </Link>
            ) : null}
          </>
        }
      />
      <form className="panel mb-6 grid grid-cols-2 gap-4 md:grid-cols-4 lg:grid-cols-7" role="search" aria-label="Filter sessions" onSubmit={(e) => e.preventDefault()}>
        {select('participant', 'Participant', options.participants)}
        {select('operator', 'Operator', options.operators)}
        {select('protocol', 'Protocol', options.protocols)}
        {select('status', 'Status', SESSION_STATUSES.map((s) => ({ id: s, label: s })))}
        {select('signoff', 'Sign-off', SIGNOFF_STATES.map((s) => ({ id: s, label: s })))}
        <div>
          <label className="label" htmlFor="f-from">
            From
          </label>
          <input id="f-from" type="date" className="field" value={params.get('from') ?? ''} onChange={(e) => update({ from: e.target.value })} />
        </div>
        <div>
          <label className="label" htmlFor="f-to">
            To
          </label>
          <input id="f-to" type="date" className="field" value={params.get('to') ?? ''} onChange={(e) => update({ to: e.target.value })} />
        </div>
        {hasFilters ? (
          <div className="col-span-full">
            <button type="button" className="text-sm text-haze underline hover:text-fog" onClick={() => update(Object.fromEntries(FILTER_KEYS.map((k) => [k, null])))}>
              Clear filters
            </button>
          </div>
        ) : null}
      </form>
      {error ? (
        <p role="alert" className="mb-4 text-rust">
          {error}
        </p>
      ) : null}
      <SessionTable
        page={page}
        sort={params.get('sort') ?? 'created'}
        dir={params.get('dir') === 'asc' ? 'asc' : 'desc'}
        loading={loading}
        onSort={(sort, dir) => update({ sort, dir })}
        onPage={(p) => update({ page: String(p) }, false)}
      />
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
