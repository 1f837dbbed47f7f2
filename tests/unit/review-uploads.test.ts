// Uploads: an EDF+ file written to the specification by an independent script
// (make_upload_edf.py; also read by MNE) is streamed in, its channels matched to the montage
// through the mapping step, imported in one transaction, and trains a decoder. Bad files get a
// message naming the problem and leave nothing behind.
import { readFileSync } from 'node:fs'
import { count, eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { montages, participants, protocols, recordingChunks, runs, sessions, trials } from '~/db/schema'
import { trainDecoder } from '~/engine/decoder'
import { runRecording } from '~/server/exports.server'
import { channelKey } from '~/server/uploads.server'
import { action as importAction } from '~/routes/uploads.import'
import { cookieFor, createTestServices, type TestServices } from '../support/services'
import reference from '../fixtures/review/upload_edf.json'

const fileBytes = readFileSync(new URL('../fixtures/review/upload.edf', import.meta.url))
let t: TestServices
let fields: Record<string, string>
let operatorCookie: string
/** What the mapping step sends: the unmatched montage channels as not recorded, FC4 = 'Ch8'. */
let mapping: Record<string, string> = {}

function uploadRequest(bytes: Uint8Array, extra: Record<string, string> = {}, cookie = operatorCookie, name = 'upload.edf') {
  const body = new FormData()
  for (const [k, v] of Object.entries({ ...fields, ...extra })) body.append(k, v)
  body.append('recording', new Blob([new Uint8Array(bytes)]), name)
  return new Request('http://tiller.test/uploads/import', { method: 'POST', body, headers: { Cookie: cookie, 'X-Tiller-Upload': 'xhr' } })
}

async function post(req: Request): Promise<{ status: number; body: Record<string, unknown> }> {
  try {
    const out = await importAction({ request: req, context: t.context, params: {} } as never)
    if (out && typeof out === 'object' && 'type' in out && (out as { type: string }).type === 'DataWithResponseInit') {
      const d = out as unknown as { data: Record<string, unknown>; init: { status?: number } | null }
      return { status: d.init?.status ?? 200, body: d.data }
    }
    return { status: 200, body: out as Record<string, unknown> }
  } catch (thrown) {
    if (thrown && typeof thrown === 'object' && 'init' in thrown) return { status: (thrown as { init: { status: number } }).init.status, body: {} }
    throw thrown
  }
}

async function sessionCount() {
  const [{ n }] = await t.handle.db.select({ n: count() }).from(sessions)
  return n
}

beforeAll(async () => {
  t = await createTestServices()
  const db = t.handle.db
  const [p] = await db.select().from(participants).where(eq(participants.code, 'HS-022'))
  const [protocol] = await db.select().from(protocols).where(eq(protocols.labId, t.labId))
  const [montage] = (await db.select().from(montages).where(eq(montages.labId, t.labId))).filter((m) => m.channels.length === 16)
  fields = { participantId: p.id, protocolId: protocol.id, montageId: montage.id }
  operatorCookie = await cookieFor(t, 'operator')
})

afterAll(async () => {
  await t?.close()
})

describe('channel names', () => {
  it('match common EDF label styles to 10-10 names', () => {
    expect(channelKey('EEG C3-REF')).toBe('c3')
    expect(channelKey('EEG Cz-REF')).toBe('cz')
    expect(channelKey('CZ')).toBe('cz')
    expect(channelKey('Ch8')).toBe('ch8')
  })
})

describe('upload of an independently written EDF+ file', () => {
  it('asks for a channel mapping when montage names are missing from the file', async () => {
    const res = await post(uploadRequest(fileBytes))
    expect(res.status).toBe(409)
    const plan = res.body.needsMapping as { montageNames: string[]; fileChannels: string[]; match: number[] }
    const found = plan.montageNames.filter((_, k) => plan.match[k] >= 0)
    expect(found).toEqual(['FC3', 'C1', 'Cz', 'C2', 'C3', 'C4', 'CP3'].sort((a, b) => plan.montageNames.indexOf(a) - plan.montageNames.indexOf(b)))
    mapping = Object.fromEntries(plan.montageNames.filter((_, k) => plan.match[k] < 0).map((m) => [m, m === 'FC4' ? 'Ch8' : '']))
    expect(await sessionCount()).toBe(0)
  })

  it('imports with the mapping and cue labels, in montage order, and the data train a decoder', async () => {
    const res = await post(uploadRequest(fileBytes, { mapping: JSON.stringify(mapping), cueMap: 'T1=left, T2=right' }))
    expect(res.status).toBe(200)
    const result = res.body.result as { sessionId: string; runId: string; channels: string[]; samples: number; trials: number }
    expect(result.trials).toBe(40)
    expect(result.samples).toBe(reference.samples)
    const [session] = await t.handle.db.select().from(sessions).where(eq(sessions.id, result.sessionId))
    expect(session.status).toBe('imported')
    const [run] = await t.handle.db.select().from(runs).where(eq(runs.id, result.runId))
    expect(run.kind).toBe('calibration')
    expect(run.source).toBe('upload')
    expect(run.channels).toEqual(['FC3', 'FC4', 'C3', 'C1', 'Cz', 'C2', 'C4', 'CP3'])
    const rec = await runRecording(t.handle.db, result.runId)
    // Samples as the EDF specification decodes them (script's own decoding), within float32.
    const siteIndex = (site: string) => reference.sites.indexOf(site)
    rec.channels.forEach((name, c) => {
      for (let s = 0; s < 5; s++) expect(rec.data[c][s]).toBeCloseTo(reference.first_samples_uv[siteIndex(name)][s], 3)
    })
    expect(rec.cues).toEqual(reference.cues.map((q) => ({ sample: q.sample, label: q.label === 'T1' ? 'left' : 'right' })))
    // The planted ERD is strong: CSP + LDA separates the classes well above the 2-class chance level.
    const decoder = trainDecoder(rec, { method: 'csp', classes: ['left', 'right'], pairs: 2 })
    expect(decoder.cv.accuracy).toBeGreaterThan(0.8)
  })
})

describe('bad uploads', () => {
  it('refuse a truncated EDF with the reason and leave nothing behind', async () => {
    const before = await sessionCount()
    const [{ n: chunksBefore }] = await t.handle.db.select({ n: count() }).from(recordingChunks)
    const res = await post(uploadRequest(fileBytes.subarray(0, fileBytes.length - 1000), { cueMap: 'T1=left, T2=right' }))
    expect(res.status).toBe(422)
    expect(String(res.body.message)).toMatch(/EDF file refused.*truncated/)
    expect(await sessionCount()).toBe(before)
    const [{ n: chunksAfter }] = await t.handle.db.select({ n: count() }).from(recordingChunks)
    expect(chunksAfter).toBe(chunksBefore)
  })

  it('refuse a file that is no recording, naming what was expected', async () => {
    const res = await post(uploadRequest(new TextEncoder().encode('hello, this is not EEG'), {}, operatorCookie, 'notes.doc'))
    expect(res.status).toBe(400)
    expect(String(res.body.message)).toMatch(/not an EDF, BDF or CSV recording/)
  })

  it('say which annotations the file has when none is a cue of the protocol', async () => {
    const res = await post(uploadRequest(fileBytes, { mapping: JSON.stringify(mapping) }))
    expect(res.status).toBe(400)
    expect(String(res.body.message)).toMatch(/Annotations found: .*T1.*T2|Annotations found: .*T2.*T1/)
    expect(res.body.field).toBe('cueMap')
  })

  it('refuse a body above the size limit before reading it', async () => {
    const req = uploadRequest(fileBytes)
    const big = new Request(req, { headers: { ...Object.fromEntries(req.headers), 'Content-Length': String(2 ** 40) } })
    expect((await post(big)).status).toBe(413)
  })

  it('are not open to participants or developers', async () => {
    expect((await post(uploadRequest(fileBytes, {}, await cookieFor(t, 'participant')))).status).toBe(403)
    expect((await post(uploadRequest(fileBytes, {}, await cookieFor(t, 'developer')))).status).toBe(403)
    const [{ n }] = await t.handle.db.select({ n: count() }).from(trials)
    expect(n).toBe(40)
  })
})
