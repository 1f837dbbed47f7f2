// Lab isolation: a second lab's participants, montages, protocols, people, API tokens, audit
// events and e-mail never show up for the demo lab, and their ids answer 404 (the same as an
// id that does not exist), so they cannot be probed.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { auditEvents, labs, montages, outbox, participants, protocols } from '~/db/schema'
import { createUser } from '~/server/people.server'
import { createApiToken } from '~/server/api-tokens.server'
import * as participantsIndex from '~/routes/participants._index'
import * as participantEdit from '~/routes/participants.$participantId'
import * as montagesIndex from '~/routes/montages._index'
import * as montageDetail from '~/routes/montages.$montageId'
import * as protocolsIndex from '~/routes/protocols._index'
import * as protocolDetail from '~/routes/protocols.$protocolId'
import * as peopleIndex from '~/routes/people._index'
import * as peopleInvite from '~/routes/people.invite'
import * as audit from '~/routes/audit'
import * as outboxRoute from '~/routes/outbox'
import * as apiTokens from '~/routes/api-tokens'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'

let t: TestServices
let supervisor: string
let developer: string
const other = { lab: '', participant: '', montage: '', protocol: '', user: '', token: '' }

beforeAll(async () => {
  t = await createTestServices()
  const db = t.handle.db
  const [lab] = await db.insert(labs).values({ name: 'Northfield Gait Clinic (test)' }).returning()
  other.lab = lab.id
  other.participant = (await db.insert(participants).values({ labId: lab.id, code: 'NF-ZZ9', notes: 'other lab secret' }).returning())[0].id
  other.montage = (await db.insert(montages).values({ labId: lab.id, name: 'Other lab cap', channels: [{ name: 'Cz', x: 0, y: 0, z: 1 }] }).returning())[0].id
  other.protocol = (await db.insert(protocols).values({ labId: lab.id, name: 'Other lab protocol', classes: ['left', 'feet'] }).returning())[0].id
  const otherDev = await createUser(db, { labId: lab.id, email: 'dev@northfield.example', name: 'Other Developer', role: 'developer', password: 'other-developer-pass' })
  other.user = otherDev.id
  other.token = (await createApiToken(db, otherDev, { name: 'other lab token', expiresDays: null })).row.id
  await db.insert(auditEvents).values({ labId: lab.id, actorId: otherDev.id, action: 'other-lab.event' })
  await db.insert(outbox).values({ labId: lab.id, to: 'x@northfield.example', from: 'tiller', subject: 'Other lab mail', text: 'secret' })
  supervisor = await cookieFor(t, 'supervisor')
  developer = await cookieFor(t, 'developer')
})
afterAll(async () => t.close())

describe('lists show only the own lab', () => {
  it.each([
    ['/participants', participantsIndex.loader, 'NF-ZZ9'],
    ['/participants?q=secret', participantsIndex.loader, 'NF-ZZ9'],
    ['/montages', montagesIndex.loader, 'Other lab cap'],
    ['/protocols', protocolsIndex.loader, 'Other lab protocol'],
    ['/people', peopleIndex.loader, 'northfield'],
    ['/people/invite', peopleInvite.loader, 'NF-ZZ9'],
    ['/audit', audit.loader, 'other-lab.event'],
    ['/outbox', outboxRoute.loader, 'Other lab mail'],
  ])('%s', async (path, loader, foreign) => {
    const res = await call(loader, request(path, { cookie: supervisor }), t.context)
    expect(res.status).toBe(200)
    expect(JSON.stringify(res.data)).not.toContain(foreign)
  })

  it('API tokens lists only the developer’s own tokens', async () => {
    const res = await call(apiTokens.loader, request('/api-tokens', { cookie: developer }), t.context)
    expect(JSON.stringify(res.data)).not.toContain('other lab token')
  })
})

describe("another lab's ids answer 404, like ids that do not exist", () => {
  const cases = [
    ['participant', participantEdit, 'participantId', () => other.participant],
    ['montage', montageDetail, 'montageId', () => other.montage],
    ['protocol', protocolDetail, 'protocolId', () => other.protocol],
  ] as const
  for (const [what, mod, param, id] of cases) {
    it(`${what}: read and write`, async () => {
      for (const value of [id(), '00000000-0000-4000-8000-000000000000', 'not-a-uuid']) {
        const read = await call(mod.loader, request(`/${what}s/${value}`, { cookie: supervisor }), t.context, { [param]: value })
        expect(read.status, `${what} loader ${value}`).toBe(404)
      }
      const valid: Record<string, Record<string, string | string[]>> = {
        participant: { code: 'TAKEN-1', handedness: 'right', consentStatus: 'pending', notes: '' },
        montage: { name: 'Renamed', reference: 'FCz', ground: 'AFz' },
        protocol: { name: 'Renamed', classes: ['left', 'right'], fixationSeconds: '2', cueSeconds: '1', imagerySeconds: '4', restSeconds: '2', restJitterSeconds: '1', trialsPerClass: '20', bandLowHz: '8', bandHighHz: '30', windowStartSeconds: '0.5', windowEndSeconds: '2.5', decodingWindowSeconds: '1' },
      }
      const write = await call(mod.action, request(`/${what}s/${id()}`, { cookie: supervisor, form: valid[what] }), t.context, { [param]: id() })
      expect(write.status, `${what} action`).toBe(404)
    })
  }

  it('people: deactivating another lab’s account is a 404', async () => {
    const res = await call(peopleIndex.action, request('/people', { cookie: supervisor, form: { intent: 'deactivate', userId: other.user } }), t.context)
    expect(res.status).toBe(404)
  })

  it('people: inviting a participant account for another lab’s participant is refused', async () => {
    const res = await call(peopleInvite.action, request('/people/invite', { cookie: supervisor, form: { email: 'p@lab.example', name: 'NF-ZZ9', role: 'participant', participantId: other.participant } }), t.context)
    expect(res.status).toBe(200)
    expect((res.data as { errors: Record<string, string[]> }).errors.participantId[0]).toMatch(/not in your lab/)
  })

  it('API tokens: revoking another lab’s token is a 404', async () => {
    const res = await call(apiTokens.action, request('/api-tokens', { cookie: developer, form: { intent: 'revoke', tokenId: other.token } }), t.context)
    expect(res.status).toBe(404)
  })
})
