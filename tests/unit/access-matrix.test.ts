// Table-driven access control: every route file in app/routes (read at test time), each loader
// and action, against every role of the lab, a signed-out visitor, and users of another lab;
// expected outcomes come from tests/unit/access-matrix.table.ts. Objects of another lab, random
// ids and malformed ids answer 404, so nothing is reachable by guessing an id.
// Source for the 404-not-403 rule: OWASP Authorization Cheat Sheet (deny by default; avoid
// revealing that an object exists) and OWASP API Security Top 10 2023, API1 (object level
// authorisation).
import { existsSync, readdirSync } from 'node:fs'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Role } from '~/server/services'
import { createSecondLab, demoLabFixture, type LabFixture } from '../support/labs'
import { cookieForUserId, createTestServices, type TestServices } from '../support/services'
import { ACCESS_TABLE, type Access, type Outcome } from './access-matrix.table'

const ROOT = join(import.meta.dirname, '..', '..')
const ROUTES_DIR = join(ROOT, 'app/routes')
const ROUTE_FILES = readdirSync(ROUTES_DIR).filter((f) => /\.(tsx?|jsx?)$/.test(f))
const ROLES: Role[] = ['supervisor', 'operator', 'participant', 'developer']

let t: TestServices
let A: LabFixture
let B: LabFixture
let live: { close(): Promise<void> } | null = null
const cookies = new Map<string, string>()

beforeAll(async () => {
  t = await createTestServices()
  A = await demoLabFixture(t.services.db, t.labId)
  B = await createSecondLab(t.services.db)
  for (const lab of [A, B]) for (const role of ROLES) cookies.set(lab.userIds[role], await cookieForUserId(t, lab.userIds[role]))
  const livePath = join(ROOT, 'app/live/index.server.ts')
  if (existsSync(livePath)) {
    const { createLiveServices } = await import(livePath)
    const services = await createLiveServices({ db: t.services.db, config: t.services.config, limits: { workers: 1 }, log: () => {} })
    t.services.live = services
    live = services
  }
}, 60_000)

afterAll(async () => {
  await live?.close()
  await t?.close()
})

type Kind = 'loader' | 'action'
type Result = { outcome: Outcome | 'error'; status: number; text: string }

/** Dynamic segments of a flat-routes file name: `sessions.$sessionId_.replay.ts` -> ['sessionId']. */
function paramNames(file: string): string[] {
  return file
    .replace(/\.(tsx?|jsx?)$/, '')
    .split('.')
    .filter((s) => s.startsWith('$'))
    .map((s) => s.slice(1).replace(/_$/, ''))
}

/** Params that name a lab's object (everything but one-time link tokens). */
const OBJECT_PARAMS: Record<string, (lab: LabFixture) => string> = {
  participantId: (lab) => lab.participantId,
  montageId: (lab) => lab.montageId,
  protocolId: (lab) => lab.protocolId,
  sessionId: (lab) => lab.sessionId,
  runId: (lab) => lab.runId,
  decoderId: (lab) => lab.decoderId,
}
const TOKEN_PARAMS = new Set(['token'])

/** A table template such as '{decoderId}.json' names an object; a plain value ('decisions.csv') does not. */
function isObjectParam(file: string, name: string): boolean {
  const template = ACCESS_TABLE[file]?.params?.[name]
  if (template !== undefined) return template.includes('{')
  return !TOKEN_PARAMS.has(name)
}

function fillTemplate(template: string, lab: LabFixture, override?: string): string {
  return template.replace(/\{(\w+)\}/g, (_m, key: string) => override ?? OBJECT_PARAMS[key]?.(lab) ?? `{${key}}`)
}

function paramsFor(file: string, lab: LabFixture, override: Record<string, string> = {}): Record<string, string> {
  const out: Record<string, string> = {}
  const templates = ACCESS_TABLE[file]?.params ?? {}
  for (const name of paramNames(file)) {
    if (templates[name] !== undefined) {
      out[name] = fillTemplate(templates[name], lab, override[name])
      continue
    }
    if (TOKEN_PARAMS.has(name)) out[name] = 'f'.repeat(43)
    else if (OBJECT_PARAMS[name]) out[name] = OBJECT_PARAMS[name](lab)
    else throw new Error(`${file}: no fixture for $${name}; add one to OBJECT_PARAMS or TOKEN_PARAMS in access-matrix.test.ts`)
    if (override[name] !== undefined) out[name] = override[name]
  }
  return out
}

function urlFor(file: string, params: Record<string, string>): string {
  const segments = file
    .replace(/\.(tsx?|jsx?)$/, '')
    .split('.')
    .filter((s) => s !== '_index' && !/^_[a-z]/.test(s))
    .map((s) => (s.startsWith('$') ? params[s.slice(1).replace(/_$/, '')] : s.replace(/_$/, '')))
  return `http://tiller.test/${segments.join('/')}`
}

function safeStringify(value: unknown): string {
  try {
    return JSON.stringify(value, (_k, v) => (typeof v === 'bigint' ? String(v) : v)) ?? ''
  } catch {
    return String(value)
  }
}

async function responseText(res: Response, abort: AbortController): Promise<string> {
  const type = res.headers.get('Content-Type') ?? ''
  if (!res.body) return ''
  if (type.includes('event-stream') || type.includes('ndjson')) {
    // A live stream never ends by itself: read what is there at once, then hang up as a browser would.
    const reader = res.body.getReader()
    const first = await Promise.race([reader.read(), new Promise<null>((r) => setTimeout(() => r(null), 100))])
    abort.abort()
    await reader.cancel().catch(() => {})
    return first && first.value ? new TextDecoder().decode(first.value) : ''
  }
  return (await res.text()).slice(0, 200_000)
}

async function invoke(file: string, kind: Kind, credential: { cookie?: string; bearer?: string }, params: Record<string, string>, access: Access): Promise<Result> {
  const form = access.form
  const mod = (await import(join(ROUTES_DIR, file))) as Record<string, unknown>
  const fn = mod[kind] as (args: unknown) => unknown
  const headers = new Headers()
  if (credential.cookie) headers.set('Cookie', credential.cookie)
  if (credential.bearer) headers.set('Authorization', `Bearer ${credential.bearer}`)
  const abort = new AbortController()
  let body: FormData | undefined
  if (kind === 'action') {
    body = new FormData()
    for (const [k, v] of Object.entries(form ?? {})) for (const item of Array.isArray(v) ? v : [v]) body.append(k, item)
  }
  const url = urlFor(file, params) + (access.query ? `?${access.query}` : '')
  const request = new Request(url, { method: kind === 'action' ? 'POST' : 'GET', headers, body, signal: abort.signal })
  let value: unknown
  try {
    value = await fn({ request, context: t.context, params })
  } catch (thrown) {
    value = thrown
  }
  let status = 200
  let location: string | null = null
  let text = ''
  if (value instanceof Response) {
    status = value.status
    location = value.headers.get('Location')
    text = await responseText(value, abort)
  } else if (value && typeof value === 'object' && (value as { type?: string }).type === 'DataWithResponseInit') {
    const v = value as { data: unknown; init: { status?: number; headers?: HeadersInit } | null }
    status = v.init?.status ?? 200
    location = new Headers(v.init?.headers).get('Location')
    text = safeStringify(v.data)
  } else if (value instanceof Error) {
    return { outcome: 'error', status: 500, text: `${value.name}: ${value.message}` }
  } else {
    text = safeStringify(value)
  }
  abort.abort()
  const outcome: Result['outcome'] =
    status >= 300 && status < 400 && location?.startsWith('/sign-in')
      ? 'sign-in'
      : status === 401
        ? 'unauthorized'
        : status === 403
          ? 'forbidden'
          : status === 404
            ? 'not-found'
            : status >= 500
              ? 'error'
              : 'ok'
  return { outcome, status, text }
}

function accessesOf(entry: Access | Access[] | undefined): Access[] {
  return entry === undefined ? [] : Array.isArray(entry) ? entry : [entry]
}

function describeForm(access: Access) {
  return access.form?.intent ? ` intent=${access.form.intent}` : ''
}

describe('access matrix', () => {
  it('lists every route file of app/routes', () => {
    const missing = ROUTE_FILES.filter((f) => !ACCESS_TABLE[f])
    expect(missing, `add these routes to tests/unit/access-matrix.table.ts: ${missing.join(', ')}`).toEqual([])
  })

  for (const file of ROUTE_FILES) {
    const spec = ACCESS_TABLE[file]
    if (!spec) continue
    const objectParams = paramNames(file).filter((n) => isObjectParam(file, n))

    describe(file, () => {
      it('exports exactly the loader and action the table lists', async () => {
        const mod = (await import(join(ROUTES_DIR, file))) as Record<string, unknown>
        expect(typeof mod.loader === 'function', 'loader').toBe(spec.loader !== undefined)
        expect(typeof mod.action === 'function', 'action').toBe(spec.action !== undefined)
      })

      for (const kind of ['loader', 'action'] as const) {
        for (const access of accessesOf(spec[kind])) {
          it(`${kind}${describeForm(access)}: each role, signed out, and another lab`, async () => {
            const failures: string[] = []
            const check = (who: string, got: Result, want: Outcome) => {
              if (got.outcome !== want) failures.push(`${who}: expected ${want}, got ${got.outcome} (${got.status}) ${got.text.slice(0, 160)}`)
            }
            const params = paramsFor(file, A)
            const everyone = access.allow === 'anyone'
            const allowed = (role: Role) => everyone || (access.allow as readonly Role[]).includes(role)

            const ok = access.allowedGets ?? 'ok'
            check('signed out', await invoke(file, kind, {}, params, access), access.signedOut ?? (everyone ? ok : 'sign-in'))
            for (const role of ROLES) {
              check(role, await invoke(file, kind, { cookie: cookies.get(A.userIds[role]) }, params, access), allowed(role) ? ok : 'forbidden')
            }

            // Another lab, with every role the route allows.
            for (const role of ROLES.filter(allowed)) {
              const got = await invoke(file, kind, { cookie: cookies.get(B.userIds[role]) }, params, access)
              if (objectParams.length > 0) check(`other lab ${role} on this lab's object`, got, 'not-found')
              else {
                check(`other lab ${role}`, got, ok)
                const leaked = A.secrets.filter((s) => got.text.includes(s))
                if (leaked.length > 0) failures.push(`other lab ${role} sees this lab's ${leaked.join(', ')}`)
              }
            }

            // Guessed and malformed ids.
            if (objectParams.length > 0 && !everyone) {
              const role = ROLES.find(allowed)!
              for (const name of objectParams) {
                for (const guess of [crypto.randomUUID(), 'not-a-uuid', '1 or 1=1', B.participantId, B.sessionId]) {
                  check(`${role} with ${name}=${guess}`, await invoke(file, kind, { cookie: cookies.get(A.userIds[role]) }, paramsFor(file, A, { [name]: guess }), access), 'not-found')
                }
              }
              if (objectParams.includes('sessionId') && allowed('participant')) {
                const got = await invoke(file, kind, { cookie: cookies.get(A.userIds.participant) }, paramsFor(file, A, { sessionId: A.otherSessionId }), access)
                check("participant on another participant's session", got, 'not-found')
              }
              if (objectParams.includes('participantId') && allowed('participant')) {
                const got = await invoke(file, kind, { cookie: cookies.get(A.userIds.participant) }, paramsFor(file, A, { participantId: A.otherParticipantId }), access)
                check("participant on another participant's record", got, 'not-found')
              }
            }

            // Bearer API tokens (scripts): a developer's token works; an unknown token is 401.
            if (access.bearer) {
              check('developer API token', await invoke(file, kind, { bearer: A.apiTokens.developer }, params, access), ok)
              check('unknown API token', await invoke(file, kind, { bearer: 'tlr_' + 'a'.repeat(40) }, params, access), 'unauthorized')
              if (objectParams.length > 0) check('other lab developer API token', await invoke(file, kind, { bearer: B.apiTokens.developer }, params, access), 'not-found')
            }

            expect(failures, failures.join('\n')).toEqual([])
          })
        }
      }
    })
  }
})
