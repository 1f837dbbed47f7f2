// Exports: EDF+ read back by MNE (mne.io.read_raw_edf, fixture from read_export_edf.py) with the
// recorded samples and the cues as annotations; CSV of decisions and trials; decoder JSON;
// access rules of the download routes.
import { createHash } from 'node:crypto'
import { eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { decisions, decoders, labs, participants } from '~/db/schema'
import { readRecording } from '~/engine/formats/index'
import { csvField, decisionsCsv, runRecording, runRecordingFile, trialsCsv } from '~/server/exports.server'
import { loader as runFile } from '~/routes/exports.runs.$runId.$file'
import { loader as decoderFile } from '~/routes/exports.decoders.$file'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'
import { EXPORT_RUN, exportValueUv, insertExportRun } from '../fixtures/review/export-run'
import mneRead from '../fixtures/review/export_edf_mne.json'

let t: TestServices
let runId: string
let sessionId: string

beforeAll(async () => {
  t = await createTestServices()
  ;({ runId, sessionId } = await insertExportRun(t.handle.db, t.labId))
  await t.handle.db.insert(decisions).values([
    { sessionId, runId, trialIndex: 0, sample: 300, receivedAt: new Date('2026-11-03T09:15:01.2Z'), output: -0.5, probability: 0.62, decidedClass: 'left', cue: 'left', latencyUs: 812 },
    { sessionId, runId, trialIndex: null, sample: 316, receivedAt: new Date('2026-11-03T09:15:01.264Z'), output: 1.25, probability: 0.78, decidedClass: 'right', cue: null, latencyUs: 790 },
  ])
})

afterAll(async () => {
  await t?.close()
})

describe('EDF+ export', () => {
  it('is byte for byte the file MNE was given (regenerate with make-export-edf.ts, then read_export_edf.py)', async () => {
    const bytes = await runRecordingFile(t.handle.db, runId, 'edf')
    expect(createHash('sha256').update(bytes).digest('hex')).toBe(mneRead.sha256)
  })

  it('reads in MNE with the recorded samples, within the 16-bit quantisation of the EDF specification', () => {
    expect(mneRead.channels).toEqual(EXPORT_RUN.channels)
    expect(mneRead.sfreq).toBe(EXPORT_RUN.rateHz)
    expect(mneRead.n_times).toBe(EXPORT_RUN.samples)
    mneRead.values_uv.forEach((row, c) => {
      // Physical range of a channel here is under 80 µV: one digital step is < 80/65535 µV.
      row.forEach((v, i) => expect(Math.abs(v - exportValueUv(c, mneRead.picks[i]))).toBeLessThan(0.01))
    })
  })

  it('carries the cues as annotations named by class, at their onsets (MNE annotations)', () => {
    const cues = mneRead.annotations.filter((a) => a.description === 'left' || a.description === 'right')
    expect(cues.map((a) => [a.onset, a.description])).toEqual(EXPORT_RUN.cues.map((c) => [c.sample / EXPORT_RUN.rateHz, c.label]))
    expect(mneRead.annotations.map((a) => a.description)).toContain('participant moved')
  })

  it('reads back through Tiller’s own reader with the same cues', async () => {
    const back = readRecording(await runRecordingFile(t.handle.db, runId, 'edf'), 'x.edf')
    expect(back.cues).toEqual(EXPORT_RUN.cues)
  })

  it('names a gap in the stored samples instead of closing it up', async () => {
    const gapped = await insertExportRun(t.handle.db, t.labId, { gap: [1000, 1100] })
    const rec = await runRecording(t.handle.db, gapped.runId)
    expect(rec.data[0].length).toBe(EXPORT_RUN.samples)
    expect(rec.annotations.find((a) => a.text.startsWith('gap:'))).toMatchObject({ onsetSeconds: 4, durationSeconds: 0.4 })
  })
})

describe('CSV exports', () => {
  it('writes every decision with a header, RFC 4180 quoting and ISO times', async () => {
    const text = await new Response(decisionsCsv(t.handle.db, { runId })).text()
    const lines = text.trimEnd().split('\r\n')
    expect(lines[0]).toBe('session_id,run_id,run_index,trial_index,sample,received_at,output,probability,decided_class,cue,latency_us')
    expect(lines).toHaveLength(3)
    expect(lines[1]).toBe(`${sessionId},${runId},1,0,300,2026-11-03T09:15:01.200Z,-0.5,0.62,left,left,812`)
    expect(lines[2].split(',')[3]).toBe('')
    expect(csvField('a,"b"')).toBe('"a,""b"""')
  })

  it('writes the trials with cue onsets in seconds', async () => {
    const lines = (await trialsCsv(t.handle.db, { sessionId })).trimEnd().split('\r\n')
    expect(lines).toHaveLength(5)
    expect(lines[2].split(',').slice(3, 7)).toEqual(['1', 'right', '875', '3.5'])
  })
})

describe('download routes', () => {
  it('give operators the EDF+ file with a download name, and refuse participants and other labs', async () => {
    const res = (await runFile({ request: request(`/exports/runs/${runId}/recording.edf`, { cookie: await cookieFor(t, 'operator') }), context: t.context, params: { runId, file: 'recording.edf' } } as never)) as Response
    expect(res.status).toBe(200)
    expect(res.headers.get('Content-Disposition')).toMatch(/attachment; filename="run-1-.*-recording\.edf"/)
    expect((await res.arrayBuffer()).byteLength).toBeGreaterThan(256)
    const participant = await call(runFile as never, request(`/exports/runs/${runId}/recording.edf`, { cookie: await cookieFor(t, 'participant') }), t.context, { runId, file: 'recording.edf' })
    expect(participant.status).toBe(403)
    const unknown = await call(runFile as never, request(`/exports/runs/${runId}/recording.xyz`, { cookie: await cookieFor(t, 'operator') }), t.context, { runId, file: 'recording.xyz' })
    expect(unknown.status).toBe(404)
  })

  it('serves a decoder as JSON to its lab only', async () => {
    const db = t.handle.db
    const [p] = await db.select().from(participants).where(eq(participants.labId, t.labId))
    const [d] = await db.insert(decoders).values({ labId: t.labId, participantId: p.id, version: 1, method: 'csp', trainedOnRunIds: [runId], model: { version: 1, method: 'csp' } }).returning()
    const res = (await decoderFile({ request: request(`/exports/decoders/${d.id}.json`, { cookie: await cookieFor(t, 'supervisor') }), context: t.context, params: { file: `${d.id}.json` } } as never)) as Response
    expect(res.status).toBe(200)
    expect((await res.json()).model).toEqual({ version: 1, method: 'csp' })
    const [lab2] = await db.insert(labs).values({ name: 'Elsewhere' }).returning()
    const [p2] = await db.insert(participants).values({ labId: lab2.id, code: 'EL-1' }).returning()
    const [d2] = await db.insert(decoders).values({ labId: lab2.id, participantId: p2.id, version: 1, method: 'csp', trainedOnRunIds: [], model: {} }).returning()
    const other = await call(decoderFile as never, request(`/exports/decoders/${d2.id}.json`, { cookie: await cookieFor(t, 'supervisor') }), t.context, { file: `${d2.id}.json` })
    expect(other.status).toBe(404)
  })
})
