// Form validation of the foundation screens: each zod schema accepts good input, and each
// action answers bad input with inline errors keyed by field, writing nothing. Check values
// come from the rules of the trade named beside them, or from the forms' own stated limits.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { count, eq } from 'drizzle-orm'
import { auditEvents, montages, participants, protocols } from '~/db/schema'
import { parseForm } from '~/lib/forms'
import { participantSchema } from '~/server/participants.server'
import { montageCreateSchema, montageEditSchema } from '~/server/montages.server'
import { protocolSchema } from '~/server/protocols.server'
import { inviteSchema } from '~/server/lab-people.server'
import { newPasswordSchema } from '~/server/password-links.server'
import { apiTokenActionSchema } from '~/server/api-tokens.server'
import * as participantsNew from '~/routes/participants.new'
import * as participantEdit from '~/routes/participants.$participantId'
import * as montagesNew from '~/routes/montages.new'
import * as protocolsNew from '~/routes/protocols.new'
import * as protocolDetail from '~/routes/protocols.$protocolId'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'

function form(values: Record<string, string | string[]>): FormData {
  const f = new FormData()
  for (const [k, v] of Object.entries(values)) for (const item of Array.isArray(v) ? v : [v]) f.append(k, item)
  return f
}

const goodParticipant = { code: 'HS-031', yearOfBirth: '1988', handedness: 'left', consentStatus: 'given', consentDate: '2026-11-03', notes: 'Mornings only.' }

const goodProtocol = {
  name: 'Feet vs right hand',
  classes: ['right', 'feet'],
  fixationSeconds: '2',
  cueSeconds: '1.25',
  imagerySeconds: '4',
  restSeconds: '2',
  restJitterSeconds: '1',
  trialsPerClass: '30',
  bandLowHz: '8',
  bandHighHz: '30',
  windowStartSeconds: '0.5',
  windowEndSeconds: '2.5',
  decodingWindowSeconds: '1',
}

describe('participant schema', () => {
  it('accepts a complete record and turns the year into a number', () => {
    const r = parseForm(participantSchema, form(goodParticipant))
    expect(r.ok).toBe(true)
    if (r.ok) expect(r.data.yearOfBirth).toBe(1988)
  })

  it('leaves year of birth and consent date optional while consent is pending', () => {
    const r = parseForm(participantSchema, form({ code: 'HS-032', yearOfBirth: '', handedness: 'right', consentStatus: 'pending', consentDate: '', notes: '' }))
    expect(r.ok).toBe(true)
    if (r.ok) expect(r.data.yearOfBirth).toBeUndefined()
  })

  it.each([
    ['code', { code: 'x' }, /at least 2/],
    ['code', { code: 'Anna Berg' }, /never a name/],
    ['yearOfBirth', { yearOfBirth: '1850' }, /1900 or later/],
    ['yearOfBirth', { yearOfBirth: String(new Date().getUTCFullYear() + 1) }, /future/],
    ['yearOfBirth', { yearOfBirth: 'nineteen' }, /number/],
    ['handedness', { handedness: 'both' }, /right, left or ambidextrous/],
    ['consentDate', { consentDate: '' }, /date consent was given/],
    ['consentDate', { consentDate: '2026-02-30' }, /calendar date|YYYY/],
    ['consentDate', { consentDate: '2999-01-01' }, /future/],
    ['notes', { notes: 'n'.repeat(2001) }, /2000/],
  ])('rejects a bad %s with a message under that field', (field, change, message) => {
    const r = parseForm(participantSchema, form({ ...goodParticipant, ...change }))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.errors[field]?.join(' ')).toMatch(message)
  })
})

describe('montage schema', () => {
  const base = { name: 'Cap A', reference: 'FCz', ground: 'AFz' }
  it('accepts each 10-20 preset count (8, 16, 21, 32, 64) and nothing else', () => {
    for (const preset of ['8', '16', '21', '32', '64']) expect(parseForm(montageCreateSchema, form({ ...base, source: 'preset', preset })).ok).toBe(true)
    const r = parseForm(montageCreateSchema, form({ ...base, source: 'preset', preset: '19' }))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.errors.preset?.[0]).toMatch(/8, 16, 21, 32, 64/)
  })

  it('reads CSV lines and reports a bad line under the csv field', () => {
    expect(parseForm(montageCreateSchema, form({ ...base, source: 'csv', csv: 'name,x,y,z\nC3\nC4\nCz\nX1,0.1,0.2,0.9' })).ok).toBe(true)
    const r = parseForm(montageCreateSchema, form({ ...base, source: 'csv', csv: 'C3\nC4\nQQ7' }))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.errors.csv?.[0]).toMatch(/line 3.*QQ7/)
  })

  it('keeps ground and reference apart (separate electrodes, common practice)', () => {
    const r = parseForm(montageEditSchema, form({ name: 'Cap A', reference: 'AFz', ground: 'afz' }))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.errors.ground?.[0]).toMatch(/separate/)
  })
})

describe('protocol schema', () => {
  it('accepts a two-class protocol with the default timing', () => {
    const r = parseForm(protocolSchema, form(goodProtocol))
    expect(r.ok).toBe(true)
    if (r.ok) expect(r.data).toMatchObject({ classes: ['right', 'feet'], trialsPerClass: 30, bandLowHz: 8, bandHighHz: 30, intent: 'save' })
  })

  it.each([
    ['classes', { classes: 'left' }, /at least two/],
    ['classes', { classes: ['left', 'tongue'] }, /Unknown class/],
    ['bandHighHz', { bandLowHz: '30', bandHighHz: '8' }, /above the low edge/],
    ['trialsPerClass', { trialsPerClass: '2.5' }, /whole number/],
    ['trialsPerClass', { trialsPerClass: '' }, /Enter a number/],
    // The training epoch is counted from cue onset and must end by the end of imagery.
    ['windowEndSeconds', { windowEndSeconds: '6' }, /end of imagery \(5.25 s/],
    ['windowEndSeconds', { windowStartSeconds: '2', windowEndSeconds: '1.5' }, /end after it starts/],
    ['decodingWindowSeconds', { imagerySeconds: '1', windowEndSeconds: '2', decodingWindowSeconds: '2' }, /longer than the imagery/],
    ['imagerySeconds', { imagerySeconds: '-1' }, /at least 1 s/],
  ])('rejects a bad %s', (field, change, message) => {
    const r = parseForm(protocolSchema, form({ ...goodProtocol, ...change }))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.errors[field]?.join(' ')).toMatch(message)
  })
})

describe('account schemas', () => {
  it('needs the participant record for a participant invitation', () => {
    const r = parseForm(inviteSchema, form({ email: 'new@lab.example', name: 'P-1', role: 'participant' }))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.errors.participantId?.[0]).toMatch(/participant record/)
    expect(parseForm(inviteSchema, form({ email: 'New@Lab.Example ', name: 'Ada', role: 'operator' }))).toMatchObject({ ok: true, data: { email: 'new@lab.example' } })
  })

  it('asks for a 10-character password typed twice the same', () => {
    const short = parseForm(newPasswordSchema, form({ password: 'short', confirm: 'short' }))
    expect(!short.ok && short.errors.password?.[0]).toMatch(/at least 10/)
    const differ = parseForm(newPasswordSchema, form({ password: 'long enough one', confirm: 'long enough two' }))
    expect(!differ.ok && differ.errors.confirm?.[0]).toMatch(/differ/)
  })

  it('names API tokens and knows only create and revoke', () => {
    expect(parseForm(apiTokenActionSchema, form({ intent: 'create', name: ' notebook ', expires: '30' }))).toMatchObject({ ok: true, data: { name: 'notebook' } })
    expect(parseForm(apiTokenActionSchema, form({ intent: 'create', name: '' })).ok).toBe(false)
    expect(parseForm(apiTokenActionSchema, form({ intent: 'revoke', tokenId: 'not-a-uuid' })).ok).toBe(false)
    expect(parseForm(apiTokenActionSchema, form({ intent: 'drop' })).ok).toBe(false)
  })
})

describe('actions answer bad input inline and write nothing', () => {
  let t: TestServices
  let supervisor: string
  beforeAll(async () => {
    t = await createTestServices()
    supervisor = await cookieFor(t, 'supervisor')
  })
  afterAll(async () => t.close())

  const rows = async (table: typeof participants | typeof montages | typeof protocols) => (await t.handle.db.select({ n: count() }).from(table).where(eq(table.labId, t.labId)))[0].n

  it('participant: errors by field, the typed values back, no row', async () => {
    const before = await rows(participants)
    const res = await call(participantsNew.action, request('/participants/new', { cookie: supervisor, form: { ...goodParticipant, code: 'a b', consentDate: '' } }), t.context)
    expect(res.status).toBe(200)
    const data = res.data as { errors: Record<string, string[]>; values: Record<string, string> }
    expect(Object.keys(data.errors).sort()).toEqual(['code', 'consentDate'])
    expect(data.values.notes).toBe('Mornings only.')
    expect(await rows(participants)).toBe(before)
  })

  it('participant: a code already used in the lab (any case) is an error under code', async () => {
    const res = await call(participantsNew.action, request('/participants/new', { cookie: supervisor, form: { ...goodParticipant, code: 'hs-014' } }), t.context)
    expect((res.data as { errors: Record<string, string[]> }).errors.code[0]).toMatch(/already used/)
  })

  it('participant: create redirects to the list, edit changes the row, both audited', async () => {
    const created = await call(participantsNew.action, request('/participants/new', { cookie: supervisor, form: goodParticipant }), t.context)
    expect(created.status).toBe(302)
    expect(created.location).toBe('/participants?saved=HS-031')
    const [row] = await t.handle.db.select().from(participants).where(eq(participants.code, 'HS-031'))
    expect(row).toMatchObject({ yearOfBirth: 1988, handedness: 'left', consentStatus: 'given', consentDate: '2026-11-03' })
    const edited = await call(participantEdit.action, request(`/participants/${row.id}`, { cookie: supervisor, form: { ...goodParticipant, consentStatus: 'withdrawn' } }), t.context, { participantId: row.id })
    expect(edited.status).toBe(302)
    const [after] = await t.handle.db.select().from(participants).where(eq(participants.id, row.id))
    expect(after.consentStatus).toBe('withdrawn')
    const events = await t.handle.db.select().from(auditEvents).where(eq(auditEvents.target, 'HS-031'))
    expect(events.map((e) => e.action).sort()).toEqual(['participant.created', 'participant.updated'])
    expect(events.find((e) => e.action === 'participant.updated')?.detail).toMatchObject({ fields: ['consentStatus'] })
  })

  it('montage: a CSV upload (multipart file) becomes a montage with the file’s channels', async () => {
    const body = new FormData()
    for (const [k, v] of Object.entries({ name: 'Uploaded cap', source: 'csv', reference: 'linked earlobes', ground: 'AFz' })) body.append(k, v)
    body.append('csvFile', new File(['name,x,y,z\nC3,-0.7,0,0.7\nC4,0.7,0,0.7\nCz\n'], 'cap.csv', { type: 'text/csv' }))
    const req = new Request('http://tiller.test/montages/new', { method: 'POST', headers: { Cookie: supervisor }, body })
    const res = await call(montagesNew.action, req, t.context)
    expect(res.status).toBe(302)
    const [row] = await t.handle.db.select().from(montages).where(eq(montages.name, 'Uploaded cap'))
    expect(row.channels.map((c) => c.name)).toEqual(['C3', 'C4', 'Cz'])
    // Positions are normalised onto the unit sphere: (-0.7, 0, 0.7)/|.| = (-1/√2, 0, 1/√2).
    expect(row.channels[0].x).toBeCloseTo(-Math.SQRT1_2, 12)
    expect(row.channels[0].z).toBeCloseTo(Math.SQRT1_2, 12)
  })

  it('montage: a preset montage carries the preset’s channels', async () => {
    const res = await call(montagesNew.action, request('/montages/new', { cookie: supervisor, form: { name: 'Strip 8', source: 'preset', preset: '8', reference: 'FCz', ground: 'AFz' } }), t.context)
    expect(res.status).toBe(302)
    const [row] = await t.handle.db.select().from(montages).where(eq(montages.name, 'Strip 8'))
    expect(row.channels).toHaveLength(8)
    expect(row.channels.map((c) => c.name)).toContain('C3')
  })

  it('protocol: bad timing comes back inline with the checked classes kept', async () => {
    const before = await rows(protocols)
    const res = await call(protocolsNew.action, request('/protocols/new', { cookie: supervisor, form: { ...goodProtocol, windowEndSeconds: '9' } }), t.context)
    const data = res.data as { errors: Record<string, string[]>; classes: string[] }
    expect(data.errors.windowEndSeconds).toBeDefined()
    expect(data.classes).toEqual(['right', 'feet'])
    expect(await rows(protocols)).toBe(before)
  })

  it('protocol: "save as new" leaves the original untouched', async () => {
    const [original] = await t.handle.db.select().from(protocols).where(eq(protocols.labId, t.labId))
    const res = await call(protocolDetail.action, request(`/protocols/${original.id}`, { cookie: supervisor, form: { ...goodProtocol, intent: 'copy', name: 'Copy with 30 trials' } }), t.context, { protocolId: original.id })
    expect(res.status).toBe(302)
    const [same] = await t.handle.db.select().from(protocols).where(eq(protocols.id, original.id))
    expect(same).toEqual(original)
    const [copy] = await t.handle.db.select().from(protocols).where(eq(protocols.name, 'Copy with 30 trials'))
    expect(copy.trialsPerClass).toBe(30)
  })
})
