// Sign-in, throttling, and the role checks of requireUser.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { THROTTLE, requireUser } from '~/server/auth.server'
import { verifyPassword, hashPassword } from '~/server/passwords.server'
import { action as signInAction } from '~/routes/sign-in'
import { loader as homeLoader } from '~/routes/home'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'

let t: TestServices
beforeAll(async () => {
  t = await createTestServices()
})
afterAll(async () => t.close())

describe('passwords', () => {
  it('are stored as scrypt hashes and verify only the right password', async () => {
    const hash = await hashPassword('correct horse battery')
    expect(hash.startsWith('scrypt$')).toBe(true)
    expect(hash).not.toContain('correct horse')
    expect(await verifyPassword('correct horse battery', hash)).toBe(true)
    expect(await verifyPassword('wrong', hash)).toBe(false)
  })
})

describe('sign-in', () => {
  it('redirects a correct sign-in home with a fresh httpOnly session cookie', async () => {
    const res = await signInAction({ request: request('/sign-in', { form: { email: 'tomas.reyes@harbourside.example', password: 'demo-operator-2026' } }), context: t.context, params: {} } as never)
    expect(res).toBeInstanceOf(Response)
    const r = res as Response
    expect(r.status).toBe(302)
    expect(r.headers.get('Location')).toBe('/home')
    expect(r.headers.get('Set-Cookie')).toMatch(/HttpOnly/)
    expect(r.headers.get('Set-Cookie')).toMatch(/SameSite=Lax/)
  })

  it('refuses a wrong password with a message and throttles after repeated failures', async () => {
    const attempt = () =>
      call(signInAction, request('/sign-in', { form: { email: 'maren.holt@harbourside.example', password: 'nope' }, headers: { 'x-tiller-client-ip': '10.9.9.9' } }), t.context)
    for (let i = 0; i < THROTTLE.maxFailures; i++) {
      const r = await attempt()
      expect(r.status).toBe(400)
      expect(JSON.stringify(r.data)).toMatch(/do not match/)
    }
    const blocked = await attempt()
    expect(JSON.stringify(blocked.data)).toMatch(/Too many failed attempts/)
    // Even the right password is refused while throttled.
    const right = await call(signInAction, request('/sign-in', { form: { email: 'maren.holt@harbourside.example', password: 'demo-supervisor-2026' } }), t.context)
    expect(right.status).toBe(400)
  })
})

describe('requireUser', () => {
  it('sends a signed-out visitor to sign-in and keeps the target', async () => {
    const r = await call(homeLoader, request('/home'), t.context)
    expect(r.status).toBe(302)
    expect(r.location).toBe('/sign-in?redirectTo=%2Fhome')
  })

  it('refuses a role that is not listed with 403', async () => {
    const cookie = await cookieFor(t, 'participant')
    const r = await call(homeLoader, request('/home', { cookie }), t.context)
    expect(r.status).toBe(403)
  })

  it('lets a listed role through', async () => {
    const cookie = await cookieFor(t, 'operator')
    const user = await requireUser(request('/home', { cookie }), t.context, { roles: ['operator'] })
    expect(user.role).toBe('operator')
  })
})
