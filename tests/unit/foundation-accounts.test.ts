// Accounts end to end through the route modules: invitation -> set password -> sign in;
// password reset by one-time link with throttled requests; deactivation; API tokens shown
// once and checked as bearer credentials; who sees one-time links on the outbox page; the
// audit log's order and pages; and the `tiller token create` command.
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest'
import { and, desc, eq } from 'drizzle-orm'
import { apiTokens, auditEvents, authTokens, outbox, users } from '~/db/schema'
import { getApiUser, THROTTLE } from '~/server/auth.server'
import { hashToken } from '~/server/passwords.server'
import { HIDDEN_LINK, maskOneTimeLinks, mayReadLinks, outboxPage } from '~/server/outbox.server'
import { auditPage } from '~/server/audit-log.server'
import { PAGE_SIZE } from '~/server/records.server'
import type { SessionUser } from '~/server/services'
import * as signIn from '~/routes/sign-in'
import * as peopleIndex from '~/routes/people._index'
import * as peopleInvite from '~/routes/people.invite'
import * as invite from '~/routes/invite.$token'
import * as reset from '~/routes/reset.$token'
import * as forgot from '~/routes/forgot-password'
import * as apiTokensRoute from '~/routes/api-tokens'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'

let t: TestServices
let supervisor: string
let developer: string

beforeAll(async () => {
  t = await createTestServices()
  supervisor = await cookieFor(t, 'supervisor')
  developer = await cookieFor(t, 'developer')
})
afterAll(async () => t.close())

function tokenFrom(text: string, kind: 'invite' | 'reset'): string {
  const match = text.match(new RegExp(`/${kind}/([A-Za-z0-9_-]+)`))
  if (!match) throw new Error(`no ${kind} link in: ${text}`)
  return match[1]
}

async function signInAs(email: string, password: string, ip = '10.1.1.1') {
  return call(signIn.action, request('/sign-in', { form: { email, password }, headers: { 'x-tiller-client-ip': ip } }), t.context)
}

describe('invitation', () => {
  it('e-mails a link, lets the person set a password once, and they can sign in', async () => {
    const sent = await call(peopleInvite.action, request('/people/invite', { cookie: supervisor, form: { email: 'Lena.Park@harbourside.example', name: 'Lena Park', role: 'operator' } }), t.context)
    expect(sent.status).toBe(302)
    expect(sent.location).toBe('/people?invited=lena.park%40harbourside.example')
    const mail = t.sent.find((m) => m.to === 'lena.park@harbourside.example')!
    expect(mail.subject).toMatch(/invited/)
    const token = tokenFrom(mail.text, 'invite')
    // Only the hash is stored.
    const [link] = await t.handle.db.select().from(authTokens).where(eq(authTokens.tokenHash, hashToken(token)))
    expect(link.kind).toBe('invite')

    const page = await call(invite.loader, request(`/invite/${token}`), t.context, { token })
    expect(page.data).toMatchObject({ link: { valid: true, email: 'lena.park@harbourside.example', name: 'Lena Park' } })

    const mismatch = await call(invite.action, request(`/invite/${token}`, { form: { password: 'a long password', confirm: 'another' } }), t.context, { token })
    expect((mismatch.data as { errors: Record<string, string[]> }).errors.confirm).toBeDefined()

    const done = await call(invite.action, request(`/invite/${token}`, { form: { password: 'tide pool lantern', confirm: 'tide pool lantern' } }), t.context, { token })
    expect(done.data).toMatchObject({ done: true })
    const signedIn = await signInAs('lena.park@harbourside.example', 'tide pool lantern')
    expect(signedIn.status).toBe(302)
    expect(signedIn.location).toBe('/home')

    // Used up: the page says so, and a second attempt changes nothing.
    const again = await call(invite.loader, request(`/invite/${token}`), t.context, { token })
    expect(again.data).toEqual({ link: { valid: false } })
    const reuse = await call(invite.action, request(`/invite/${token}`, { form: { password: 'hijack attempt 1', confirm: 'hijack attempt 1' } }), t.context, { token })
    expect((reuse.data as { errors: Record<string, string[]> }).errors._form[0]).toMatch(/expired or was already used/)
    expect((await signInAs('lena.park@harbourside.example', 'tide pool lantern')).status).toBe(302)
  })

  it('an expired invitation shows the "no longer works" state', async () => {
    await call(peopleInvite.action, request('/people/invite', { cookie: supervisor, form: { email: 'late@harbourside.example', name: 'Late Comer', role: 'developer' } }), t.context)
    const token = tokenFrom(t.sent.find((m) => m.to === 'late@harbourside.example')!.text, 'invite')
    await t.handle.db.update(authTokens).set({ expiresAt: new Date(Date.now() - 1000) }).where(eq(authTokens.tokenHash, hashToken(token)))
    const page = await call(invite.loader, request(`/invite/${token}`), t.context, { token })
    expect(page.data).toEqual({ link: { valid: false } })
  })

  it('a participant invitation links the account to the chosen participant record', async () => {
    const choices = (await call(peopleInvite.loader, request('/people/invite', { cookie: supervisor }), t.context)).data as { participants: { id: string; code: string }[] }
    // HS-014 already has the demo participant account; HS-022 is free.
    expect(choices.participants.map((p) => p.code)).toEqual(['HS-022'])
    const res = await call(peopleInvite.action, request('/people/invite', { cookie: supervisor, form: { email: 'hs022@harbourside.example', name: 'HS-022', role: 'participant', participantId: choices.participants[0].id } }), t.context)
    expect(res.status).toBe(302)
    const [row] = await t.handle.db.select().from(users).where(eq(users.email, 'hs022@harbourside.example'))
    expect(row).toMatchObject({ role: 'participant', participantId: choices.participants[0].id, passwordHash: null })
  })

  it('refuses an address that already has an account, under the e-mail field', async () => {
    const res = await call(peopleInvite.action, request('/people/invite', { cookie: supervisor, form: { email: 'tomas.reyes@harbourside.example', name: 'Again', role: 'operator' } }), t.context)
    expect((res.data as { errors: Record<string, string[]> }).errors.email[0]).toMatch(/already exists/)
  })
})

describe('password reset', () => {
  it('answers the same for known and unknown addresses, and only mails the known one', async () => {
    const before = t.sent.length
    const known = await call(forgot.action, request('/forgot-password', { form: { email: 'tomas.reyes@harbourside.example' }, headers: { 'x-tiller-client-ip': '10.2.0.1' } }), t.context)
    const unknown = await call(forgot.action, request('/forgot-password', { form: { email: 'nobody@harbourside.example' }, headers: { 'x-tiller-client-ip': '10.2.0.2' } }), t.context)
    expect(known.data).toEqual(unknown.data)
    expect(known.data).toMatchObject({ sent: true })
    expect(t.sent.length).toBe(before + 1)

    const token = tokenFrom(t.sent.at(-1)!.text, 'reset')
    const done = await call(reset.action, request(`/reset/${token}`, { form: { password: 'harbour light 77', confirm: 'harbour light 77' } }), t.context, { token })
    expect(done.data).toMatchObject({ done: true })
    expect((await signInAs('tomas.reyes@harbourside.example', 'demo-operator-2026', '10.2.0.9')).status).toBe(400)
    expect((await signInAs('tomas.reyes@harbourside.example', 'harbour light 77', '10.2.0.9')).status).toBe(302)
    // An invitation token is not a reset token and vice versa.
    expect((await call(invite.loader, request(`/invite/${token}`), t.context, { token })).data).toEqual({ link: { valid: false } })
  })

  it(`throttles requests: after ${THROTTLE.maxFailures} in the window, no more mail`, async () => {
    const ask = () => call(forgot.action, request('/forgot-password', { form: { email: 'priya.nair@harbourside.example' }, headers: { 'x-tiller-client-ip': '10.3.0.1' } }), t.context)
    const before = t.sent.length
    for (let i = 0; i < THROTTLE.maxFailures; i++) expect((await ask()).data).toMatchObject({ sent: true })
    const blocked = await ask()
    expect(blocked.data).toMatchObject({ sent: false, throttled: expect.stringMatching(/Too many reset requests/) })
    expect(t.sent.length).toBe(before + THROTTLE.maxFailures)
  })
})

describe('API tokens', () => {
  it('shows a new token once, accepts it as a bearer credential, and refuses it once revoked', async () => {
    const created = await call(apiTokensRoute.action, request('/api-tokens', { cookie: developer, form: { intent: 'create', name: 'analysis notebook', expires: '30' } }), t.context)
    const token = (created.data as { created: { token: string } }).created.token
    expect(token).toMatch(/^tlr_[A-Za-z0-9_-]{32}$/)
    const [row] = await t.handle.db.select().from(apiTokens).where(eq(apiTokens.name, 'analysis notebook'))
    expect(row.tokenHash).toBe(hashToken(token))
    expect(row.prefix).toBe(token.slice(0, 10))
    // Expiry 30 days ahead, within a minute.
    expect(Math.abs(row.expiresAt!.getTime() - (Date.now() + 30 * 86_400_000))).toBeLessThan(60_000)

    const list = await call(apiTokensRoute.loader, request('/api-tokens', { cookie: developer }), t.context)
    expect(JSON.stringify(list.data)).not.toContain(token)

    const api = (value: string) => getApiUser(new Request('http://tiller.test/api/v1/x', { headers: { Authorization: `Bearer ${value}` } }), t.context)
    expect((await api(token))?.email).toBe('priya.nair@harbourside.example')
    expect(await api(`${token}x`)).toBeNull()

    const revoked = await call(apiTokensRoute.action, request('/api-tokens', { cookie: developer, form: { intent: 'revoke', tokenId: row.id } }), t.context)
    expect(revoked.data).toMatchObject({ revoked: 'analysis notebook' })
    expect(await api(token)).toBeNull()
    const actions = (await t.handle.db.select().from(auditEvents).where(eq(auditEvents.target, 'analysis notebook'))).map((e) => e.action).sort()
    expect(actions).toEqual(['api-token.created', 'api-token.revoked'])
  })
})

describe('deactivation', () => {
  it('stops sign-in and API tokens, is audited, and a supervisor cannot deactivate themself', async () => {
    const [dev] = await t.handle.db.select().from(users).where(eq(users.email, 'priya.nair@harbourside.example'))
    const created = await call(apiTokensRoute.action, request('/api-tokens', { cookie: developer, form: { intent: 'create', name: 'ci job', expires: 'never' } }), t.context)
    const token = (created.data as { created: { token: string } }).created.token

    const res = await call(peopleIndex.action, request('/people', { cookie: supervisor, form: { intent: 'deactivate', userId: dev.id } }), t.context)
    expect(res.data).toMatchObject({ done: expect.stringMatching(/deactivated/) })
    expect(await getApiUser(new Request('http://x/', { headers: { Authorization: `Bearer ${token}` } }), t.context)).toBeNull()
    expect((await signInAs(dev.email, 'demo-developer-2026', '10.4.0.1')).status).toBe(400)
    const [event] = await t.handle.db.select().from(auditEvents).where(and(eq(auditEvents.action, 'person.deactivated'), eq(auditEvents.target, dev.email)))
    expect(event.detail).toMatchObject({ apiTokensRevoked: 1 })

    // Reactivated, they sign in again, but revoked tokens stay revoked.
    await call(peopleIndex.action, request('/people', { cookie: supervisor, form: { intent: 'reactivate', userId: dev.id } }), t.context)
    expect((await signInAs(dev.email, 'demo-developer-2026', '10.4.0.2')).status).toBe(302)
    expect(await getApiUser(new Request('http://x/', { headers: { Authorization: `Bearer ${token}` } }), t.context)).toBeNull()

    const [self] = await t.handle.db.select().from(users).where(eq(users.email, 'maren.holt@harbourside.example'))
    const refused = await call(peopleIndex.action, request('/people', { cookie: supervisor, form: { intent: 'deactivate', userId: self.id } }), t.context)
    expect((refused.data as { errors: Record<string, string[]> }).errors._form[0]).toMatch(/your own account/)
  })
})

describe('outbox: who sees one-time links', () => {
  const link = 'http://tiller.test/reset/rst_abcDEF123_-x'
  const dev: SessionUser = { id: 'd', labId: 'l', role: 'developer', email: 'priya.nair@harbourside.example', name: 'P', participantId: null }
  const sup: SessionUser = { ...dev, role: 'supervisor', email: 'maren.holt@harbourside.example' }

  it('masks links for developers unless the message is theirs, and for everyone once delivered over SMTP', () => {
    expect(maskOneTimeLinks(`Set it here:\n\n${link}\n\nThanks`)).toBe(`Set it here:\n\n${HIDDEN_LINK}\n\nThanks`)
    expect(maskOneTimeLinks('See http://tiller.test/sessions/1 please')).toBe('See http://tiller.test/sessions/1 please')
    expect(mayReadLinks(sup, { to: 'tomas.reyes@harbourside.example', delivered: false })).toBe(true)
    expect(mayReadLinks(dev, { to: 'tomas.reyes@harbourside.example', delivered: false })).toBe(false)
    expect(mayReadLinks(dev, { to: 'Priya.Nair@harbourside.example', delivered: false })).toBe(true)
    expect(mayReadLinks(sup, { to: 'tomas.reyes@harbourside.example', delivered: true })).toBe(false)
  })

  it('the page gives a developer the message without the link', async () => {
    const [{ labId }] = await t.handle.db.select({ labId: users.labId }).from(users).where(eq(users.email, dev.email))
    await t.handle.db.insert(outbox).values({ labId, to: 'maren.holt@harbourside.example', from: 'tiller', subject: 'Reset', text: `Here: ${link}` })
    const forDev = await outboxPage(t.handle.db, { ...dev, labId }, 1)
    const forSup = await outboxPage(t.handle.db, { ...sup, labId }, 1)
    expect(forDev.rows[0].text).toBe(`Here: ${HIDDEN_LINK}`)
    expect(forSup.rows[0].text).toBe(`Here: ${link}`)
  })
})

describe('audit log', () => {
  it('lists newest first, 50 to a page, ties broken by insertion order', async () => {
    const [{ labId }] = await t.handle.db.select({ labId: users.labId }).from(users).where(eq(users.email, 'maren.holt@harbourside.example'))
    const at = new Date('2030-01-01T00:00:00Z')
    await t.handle.db.insert(auditEvents).values(Array.from({ length: 120 }, (_, i) => ({ labId, actorId: null, action: `bulk.${String(i).padStart(3, '0')}`, at })))
    const all = await t.handle.db.select().from(auditEvents).where(eq(auditEvents.labId, labId)).orderBy(desc(auditEvents.at), desc(auditEvents.id))
    const user = { id: 'x', labId, role: 'supervisor' as const, email: '', name: '', participantId: null }
    const first = await auditPage(t.handle.db, user, 1)
    expect(first.rows).toHaveLength(PAGE_SIZE)
    expect(first.rows[0].action).toBe('bulk.119')
    expect(first.total).toBe(all.length)
    expect(first.pages).toBe(Math.ceil(all.length / PAGE_SIZE))
    const last = await auditPage(t.handle.db, user, first.pages)
    expect(last.rows.map((r) => r.id)).toEqual(all.slice((first.pages - 1) * PAGE_SIZE).map((r) => r.id))
  })
})

describe('tiller token create', () => {
  let dir: string
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'tiller-token-cli-'))
    vi.stubEnv('TILLER_DATA_DIR', join(dir, 'data'))
  })
  afterAll(() => {
    vi.unstubAllEnvs()
    rmSync(dir, { recursive: true, force: true })
  })

  it('prints a working token for a developer and refuses other roles', async () => {
    const { run: demo } = await import('~/cli/commands/demo')
    const { run: tokenCli } = await import('~/cli/commands/token')
    const out: string[] = []
    const err: string[] = []
    const log = vi.spyOn(console, 'log').mockImplementation((...a) => void out.push(a.join(' ')))
    const error = vi.spyOn(console, 'error').mockImplementation((...a) => void err.push(a.join(' ')))
    try {
      expect(await demo([])).toBe(0)
      out.length = 0
      expect(await tokenCli(['create', '--email', 'priya.nair@harbourside.example', '--name', 'bench script', '--days', '7'])).toBe(0)
      expect(out).toHaveLength(1)
      expect(out[0]).toMatch(/^tlr_[A-Za-z0-9_-]{32}$/)
      expect(err.join('\n')).toMatch(/shown only this once/)
      expect(await tokenCli(['create', '--email', 'tomas.reyes@harbourside.example', '--name', 'nope'])).toBe(1)
      expect(err.join('\n')).toMatch(/API tokens are for active developers/)
      expect(await tokenCli(['create', '--email', 'priya.nair@harbourside.example'])).toBe(2)
      expect(err.join('\n')).toMatch(/--name is required/)
    } finally {
      log.mockRestore()
      error.mockRestore()
    }
  })
})
