// Test services: one in-memory PGlite per test file (opening and migrating costs ~2-3 s),
// the demo lab seeded, mail captured in memory, and helpers to call route modules the way
// React Router does, with a signed-in user's cookie.
import type { AppLoadContext } from 'react-router'
import { openDatabase, type DatabaseHandle } from '~/db/client.server'
import { loadConfig } from '~/server/config.server'
import { sessionStorageFor } from '~/server/auth.server'
import { DEMO_ACCOUNTS, seedDemo } from '~/server/demo.server'
import type { Mailer, Role, Services } from '~/server/services'
import { eq } from 'drizzle-orm'
import { users } from '~/db/schema'

export interface SentMail {
  to: string
  subject: string
  text: string
}

export interface TestServices {
  handle: DatabaseHandle
  services: Services
  context: AppLoadContext
  sent: SentMail[]
  labId: string
  close(): Promise<void>
}

export async function createTestServices(location = 'memory://'): Promise<TestServices> {
  const handle = await openDatabase(location)
  await handle.migrate()
  const { labId } = await seedDemo(handle.db)
  const sent: SentMail[] = []
  const mail: Mailer = {
    async send(m) {
      sent.push({ to: m.to, subject: m.subject, text: m.text })
    },
  }
  const config = loadConfig({ NODE_ENV: 'test', SESSION_SECRET: 'test-secret-test-secret-test-secret-42', PUBLIC_URL: 'http://tiller.test' })
  // Live services (workers, ingest) are started only by the tests that need them.
  const services: Services = { config, db: handle.db, dbKind: handle.kind, mail, live: {} as Services['live'] }
  return { handle, services, context: { services, cspNonce: '' }, sent, labId, close: () => handle.close() }
}

/** A Cookie header for a signed-in demo account of the given role. */
export async function cookieFor(t: TestServices, role: Role): Promise<string> {
  const account = DEMO_ACCOUNTS.find((a) => a.role === role)!
  const [user] = await t.handle.db.select().from(users).where(eq(users.email, account.email))
  return cookieForUserId(t, user.id)
}

export async function cookieForUserId(t: TestServices, userId: string): Promise<string> {
  const storage = sessionStorageFor(t.services.config)
  const session = await storage.getSession()
  session.set('userId', userId)
  const setCookie = await storage.commitSession(session)
  return setCookie.split(';')[0]
}

/** Builds a Request as the browser would send it. */
export function request(path: string, init: { method?: string; cookie?: string; form?: Record<string, string | string[]>; headers?: Record<string, string> } = {}): Request {
  const headers = new Headers(init.headers)
  if (init.cookie) headers.set('Cookie', init.cookie)
  let body: FormData | undefined
  if (init.form) {
    body = new FormData()
    for (const [k, v] of Object.entries(init.form)) for (const item of Array.isArray(v) ? v : [v]) body.append(k, item)
  }
  return new Request(`http://tiller.test${path}`, { method: init.method ?? (body ? 'POST' : 'GET'), headers, body })
}

/** Runs a loader or action and returns the Response (thrown redirects and data() included). */
export async function call(fn: (args: never) => unknown, req: Request, context: AppLoadContext, params: Record<string, string> = {}): Promise<{ status: number; location: string | null; data: unknown }> {
  try {
    const result = await fn({ request: req, context, params } as never)
    return normalise(result)
  } catch (thrown) {
    return normalise(thrown)
  }
}

function normalise(value: unknown): { status: number; location: string | null; data: unknown } {
  if (value instanceof Response) return { status: value.status, location: value.headers.get('Location'), data: null }
  if (value && typeof value === 'object' && 'type' in value && (value as { type: string }).type === 'DataWithResponseInit') {
    const v = value as unknown as { data: unknown; init: { status?: number; headers?: HeadersInit } | null }
    return { status: v.init?.status ?? 200, location: new Headers(v.init?.headers).get('Location'), data: v.data }
  }
  if (value instanceof Error) throw value
  return { status: 200, location: null, data: value }
}
