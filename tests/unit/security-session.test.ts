// Session cookie flags, session rotation at sign-in, and throttling of sign-in and password
// reset, through the real actions with an in-memory database.
// Sources: OWASP Session Management Cheat Sheet (renew the session id after authentication;
// Secure, HttpOnly and SameSite cookie attributes), RFC 6265bis for SameSite, OWASP
// Authentication Cheat Sheet (throttle failed logins per account and per source).
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { THROTTLE, sessionStorageFor } from '~/server/auth.server'
import { loadConfig } from '~/server/config.server'
import { DEMO_ACCOUNTS } from '~/server/demo.server'
import { requestReset } from '~/server/password-links.server'
import { action as signInAction } from '~/routes/sign-in'
import { cookieFor, createTestServices, request, type TestServices } from '../support/services'

let t: TestServices
beforeAll(async () => {
  t = await createTestServices()
})
afterAll(async () => t.close())

const account = (role: string) => DEMO_ACCOUNTS.find((a) => a.role === role)!
const SECRET = 'x'.repeat(40)

async function cookieAttributes(env: Record<string, string>): Promise<string> {
  const storage = sessionStorageFor(loadConfig({ SESSION_SECRET: SECRET, ...env }))
  const session = await storage.getSession()
  session.set('userId', 'someone')
  return storage.commitSession(session)
}

describe('session cookie flags', () => {
  it('production behind https: Secure, HttpOnly, SameSite=Lax, Path=/, bounded Max-Age', async () => {
    const cookie = await cookieAttributes({ NODE_ENV: 'production', PUBLIC_URL: 'https://tiller.lab.example' })
    expect(cookie).toMatch(/; Secure/)
    expect(cookie).toMatch(/; HttpOnly/)
    expect(cookie).toMatch(/; SameSite=Lax/)
    expect(cookie).toMatch(/; Path=\//)
    const maxAge = Number(/Max-Age=(\d+)/.exec(cookie)?.[1])
    expect(maxAge).toBeGreaterThan(0)
    expect(maxAge).toBeLessThanOrEqual(24 * 3600)
  })

  it('plain http (a loopback-only install, development, tests): no Secure, or the browser would drop the cookie', async () => {
    expect(await cookieAttributes({ NODE_ENV: 'production', PUBLIC_URL: 'http://127.0.0.1:3000' })).not.toMatch(/Secure/)
    expect(await cookieAttributes({ NODE_ENV: 'development', PUBLIC_URL: 'https://tiller.lab.example' })).not.toMatch(/Secure/)
  })

  it('is signed: a cookie edited by hand is not a session', async () => {
    const cookie = await cookieFor(t, 'participant')
    const [name, value] = cookie.split('=')
    const tampered = `${name}=${value.slice(0, 10)}A${value.slice(11)}`
    const session = await sessionStorageFor(t.services.config).getSession(tampered)
    expect(session.get('userId')).toBeUndefined()
  })
})

describe('session rotation at sign-in', () => {
  it('a planted session (another user, extra keys) is replaced by a fresh one', async () => {
    const storage = sessionStorageFor(t.services.config)
    const planted = await storage.getSession((await cookieFor(t, 'participant')).split(';')[0])
    planted.set('planted', 'attacker value')
    const plantedCookie = (await storage.commitSession(planted)).split(';')[0]

    const operator = account('operator')
    const res = (await signInAction({
      request: request('/sign-in', { cookie: plantedCookie, form: { email: operator.email, password: operator.password }, headers: { 'x-tiller-client-ip': '10.20.0.1' } }),
      context: t.context,
      params: {},
    } as never)) as Response
    expect(res.status).toBe(302)
    const fresh = res.headers.get('Set-Cookie')!.split(';')[0]
    expect(fresh).not.toBe(plantedCookie)
    const session = await storage.getSession(fresh)
    expect(session.get('planted')).toBeUndefined()
    expect(typeof session.get('issuedAt')).toBe('number')
    const plantedUserId = planted.get('userId')
    expect(session.get('userId')).not.toBe(plantedUserId)
  })

  it('a failed sign-in sets no cookie at all', async () => {
    const res = await signInAction({
      request: request('/sign-in', { form: { email: account('developer').email, password: 'wrong' }, headers: { 'x-tiller-client-ip': '10.20.0.2' } }),
      context: t.context,
      params: {},
    } as never)
    const headers = res instanceof Response ? res.headers : new Headers((res as { init?: { headers?: HeadersInit } }).init?.headers)
    expect(headers.get('Set-Cookie')).toBeNull()
  })
})

describe('throttling', () => {
  const signIn = (email: string, password: string, ip: string) =>
    signInAction({ request: request('/sign-in', { form: { email, password }, headers: { 'x-tiller-client-ip': ip } }), context: t.context, params: {} } as never)
  const messageOf = (r: unknown) => JSON.stringify((r as { data?: unknown }).data ?? null)

  it('one address trying many accounts is stopped after the allowed failures (credential stuffing)', async () => {
    const ip = '10.30.0.1'
    for (let i = 0; i < THROTTLE.maxFailures; i++) expect(messageOf(await signIn(`nobody${i}@elsewhere.example`, 'guess', ip))).toMatch(/do not match/)
    expect(messageOf(await signIn('someone-else@elsewhere.example', 'guess', ip))).toMatch(/Too many failed attempts/)
    // The right password from that address is refused too while the window lasts.
    const r = await signIn(account('developer').email, account('developer').password, ip)
    expect(r instanceof Response && r.status === 302).toBe(false)
    // Another address is not affected.
    const other = (await signIn(account('developer').email, account('developer').password, '10.30.0.2')) as Response
    expect(other.status).toBe(302)
  })

  it('the wording does not reveal whether an address has an account', async () => {
    const unknown = messageOf(await signIn('no-such-person@harbourside.example', 'x', '10.31.0.1'))
    const known = messageOf(await signIn(account('supervisor').email, 'x', '10.31.0.2'))
    expect(unknown).toBe(known)
  })

  it('password reset requests are throttled per address and per client, and mail stops', async () => {
    const deps = { db: t.services.db, mail: t.services.mail, publicUrl: 'http://tiller.test' }
    const email = account('operator').email
    const before = t.sent.length
    const results: boolean[] = []
    for (let i = 0; i < THROTTLE.maxFailures + 3; i++) {
      results.push((await requestReset(deps, request('/reset', { method: 'POST', headers: { 'x-tiller-client-ip': `10.40.0.${i}` } }), email)).throttled)
    }
    expect(results.slice(0, THROTTLE.maxFailures).every((r) => !r)).toBe(true)
    expect(results.slice(THROTTLE.maxFailures).every((r) => r)).toBe(true)
    expect(t.sent.length - before).toBe(THROTTLE.maxFailures)
    // Per client: one address asking for many accounts is stopped the same way.
    const ip = '10.41.0.1'
    const perClient: boolean[] = []
    for (let i = 0; i < THROTTLE.maxFailures + 1; i++) perClient.push((await requestReset(deps, request('/reset', { method: 'POST', headers: { 'x-tiller-client-ip': ip } }), `probe${i}@elsewhere.example`)).throttled)
    expect(perClient.at(-1)).toBe(true)
  })
})
