// The preparation screens' server side: a session needs a participant with consent 'given'
// (ethics practice: no recording without recorded consent), and every id must belong to the
// user's lab. Runs the real route modules against the in-memory database.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { eq } from 'drizzle-orm'
import { participants, sessions } from '~/db/schema'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'
import * as prepareRoute from '~/routes/sessions.new'
import * as listRoute from '~/routes/sessions._index'
import * as sessionRoute from '~/routes/sessions.$sessionId'

let t: TestServices
let cookie: string
let choices: Awaited<ReturnType<typeof prepareRoute.loader>>

beforeAll(async () => {
  t = await createTestServices()
  cookie = await cookieFor(t, 'operator')
  choices = (await call(prepareRoute.loader as never, request('/sessions/new', { cookie }), t.context)).data as typeof choices
})
afterAll(() => t.close())

const form = (over: Record<string, string> = {}) => ({
  participantId: choices.participants.find((p) => p.code === 'HS-014')!.id,
  montageId: choices.montages[0].id,
  protocolId: choices.protocols[0].id,
  notes: 'cap size 56',
  cautionsRead: 'on',
  ...over,
})

describe('preparing a session', () => {
  it('creates a planned session and shows it in the list', async () => {
    const res = await call(prepareRoute.action as never, request('/sessions/new', { cookie, form: form() }), t.context)
    expect(res.status).toBe(302)
    const id = res.location!.split('/').pop()!
    const [row] = await t.handle.db.select().from(sessions).where(eq(sessions.id, id))
    expect(row.status).toBe('planned')
    expect(row.notes).toBe('cap size 56')
    const list = (await call(listRoute.loader as never, request('/sessions', { cookie }), t.context)).data as Awaited<ReturnType<typeof listRoute.loader>>
    expect(list.groups.planned.map((s) => s.id)).toContain(id)
  })

  it('refuses a participant whose consent is not given, and says why', async () => {
    const other = choices.participants.find((p) => p.code === 'HS-022')!
    await t.handle.db.update(participants).set({ consentStatus: 'withdrawn' }).where(eq(participants.id, other.id))
    const res = await call(prepareRoute.action as never, request('/sessions/new', { cookie, form: form({ participantId: other.id }) }), t.context)
    expect(res.status).toBe(200)
    const data = res.data as { errors: Record<string, string[]> }
    expect(data.errors.participantId[0]).toMatch(/withdrawn/)
  })

  it('requires the cautions to be confirmed and ids of the own lab', async () => {
    const { cautionsRead: _c, ...rest } = form()
    const noCautions = await call(prepareRoute.action as never, request('/sessions/new', { cookie, form: rest }), t.context)
    expect((noCautions.data as { errors: Record<string, string[]> }).errors.cautionsRead).toBeTruthy()
    const foreign = await call(prepareRoute.action as never, request('/sessions/new', { cookie, form: form({ montageId: '00000000-0000-4000-8000-000000000000' }) }), t.context)
    expect((foreign.data as { errors: Record<string, string[]> }).errors.montageId[0]).toMatch(/not in your lab/)
  })

  it('keeps participants out of the sessions screens', async () => {
    const participant = await cookieFor(t, 'participant')
    const res = await call(listRoute.loader as never, request('/sessions', { cookie: participant }), t.context)
    expect(res.status).toBe(403)
  })
})

describe('session page', () => {
  it('creates a device token shown once and stores only its hash; revokes it', async () => {
    const res = await call(prepareRoute.action as never, request('/sessions/new', { cookie, form: form() }), t.context)
    const id = res.location!.split('/').pop()!
    const made = await call(sessionRoute.action as never, request(`/sessions/${id}`, { cookie, form: { intent: 'create-token', hours: '2' } }), t.context, { sessionId: id })
    const created = (made.data as { created: { token: string; prefix: string } }).created
    expect(created.token.startsWith(created.prefix)).toBe(true)
    const page = (await call(sessionRoute.loader as never, request(`/sessions/${id}`, { cookie }), t.context, { sessionId: id })).data as Awaited<ReturnType<typeof sessionRoute.loader>>
    expect(page.overview.deviceTokens).toHaveLength(1)
    expect(JSON.stringify(page)).not.toContain(created.token)
    await call(sessionRoute.action as never, request(`/sessions/${id}`, { cookie, form: { intent: 'revoke-token', tokenId: page.overview.deviceTokens[0].id } }), t.context, { sessionId: id })
    const after = (await call(sessionRoute.loader as never, request(`/sessions/${id}`, { cookie }), t.context, { sessionId: id })).data as Awaited<ReturnType<typeof sessionRoute.loader>>
    expect(after.overview.deviceTokens[0].state).toBe('revoked')
    const link = await call(sessionRoute.action as never, request(`/sessions/${id}`, { cookie, form: { intent: 'feedback-link' } }), t.context, { sessionId: id })
    expect((link.data as { feedbackUrl: string }).feedbackUrl).toMatch(new RegExp(`/feedback/${id}\\?token=tfbk_`))
  })
})
