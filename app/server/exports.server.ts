// Exports in open formats, shared by the browser downloads (/exports/...), the API and
// `tiller export`: decisions and trials as CSV (streamed page by page, so a long log never sits
// in memory whole), a run's raw recording as EDF+ (or BDF / CSV) with its cues and annotations,
// and a decoder as the engine's JSON object.
import { and, asc, eq, gt, inArray } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { annotations, decisions, decoders, recordingChunks, runs, sessionEvents, sessions, trials } from '~/db/schema'
import { data, type AppLoadContext } from 'react-router'
import { RecordingFormatError, writeRecording, type WritableFormat } from '~/engine/formats/index'
import type { Annotation, Cue, Recording } from '~/engine/recording'
import { requireDecoderInLab, requireRunInLab } from '~/server/api.server'
import { audit, clientIp } from '~/server/audit.server'
import { chunkSamples } from '~/server/review.server'
import type { SessionUser } from '~/server/services'

/** Rows read per query while streaming a CSV. */
const PAGE_ROWS = 5000
/** A recording larger than this many values is refused for in-memory conversion (~1 GB of float32). */
export const MAX_EXPORT_VALUES = 250_000_000

export class ExportError extends Error {}

export type ExportScope = { runId: string } | { sessionId: string }

/** RFC 4180 field: quoted when it holds a comma, quote or line break. */
export function csvField(value: unknown): string {
  if (value === null || value === undefined) return ''
  const text = value instanceof Date ? value.toISOString() : String(value)
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text
}

const csvLine = (fields: unknown[]) => `${fields.map(csvField).join(',')}\r\n`

async function runIdsOf(db: Database, scope: ExportScope): Promise<{ id: string; index: number }[]> {
  if ('runId' in scope) return db.select({ id: runs.id, index: runs.index }).from(runs).where(eq(runs.id, scope.runId))
  return db.select({ id: runs.id, index: runs.index }).from(runs).where(eq(runs.sessionId, scope.sessionId)).orderBy(asc(runs.index))
}

export const DECISION_COLUMNS = ['session_id', 'run_id', 'run_index', 'trial_index', 'sample', 'received_at', 'output', 'probability', 'decided_class', 'cue', 'latency_us'] as const

/** Pages of decision rows in (run, sample) order; keyset pagination by id within each run. */
export async function* decisionRows(db: Database, scope: ExportScope) {
  for (const run of await runIdsOf(db, scope)) {
    let after = 0
    for (;;) {
      const page = await db
        .select()
        .from(decisions)
        .where(and(eq(decisions.runId, run.id), gt(decisions.id, after)))
        .orderBy(asc(decisions.id))
        .limit(PAGE_ROWS)
      if (page.length === 0) break
      yield page.map((d) => ({ ...d, runIndex: run.index }))
      after = page[page.length - 1].id
      if (page.length < PAGE_ROWS) break
    }
  }
}

function textStream(lines: AsyncIterable<string>): ReadableStream<Uint8Array> {
  const encoder = new TextEncoder()
  const iterator = lines[Symbol.asyncIterator]()
  return new ReadableStream<Uint8Array>({
    async pull(controller) {
      const { value, done } = await iterator.next()
      if (done) controller.close()
      else controller.enqueue(encoder.encode(value))
    },
    async cancel() {
      await iterator.return?.()
    },
  })
}

export function decisionsCsv(db: Database, scope: ExportScope): ReadableStream<Uint8Array> {
  return textStream(
    (async function* () {
      yield csvLine([...DECISION_COLUMNS])
      for await (const page of decisionRows(db, scope)) {
        yield page
          .map((d) => csvLine([d.sessionId, d.runId, d.runIndex, d.trialIndex, d.sample, d.receivedAt, d.output, d.probability, d.decidedClass, d.cue, d.latencyUs]))
          .join('')
      }
    })(),
  )
}

/** One JSON object per line (NDJSON), in the API's field names. */
export function decisionsNdjson(db: Database, scope: ExportScope): ReadableStream<Uint8Array> {
  return textStream(
    (async function* () {
      for await (const page of decisionRows(db, scope)) {
        yield page
          .map(
            (d) =>
              `${JSON.stringify({ runId: d.runId, trialIndex: d.trialIndex, sample: d.sample, receivedAt: d.receivedAt.toISOString(), output: d.output, probability: d.probability, decidedClass: d.decidedClass, cue: d.cue, latencyUs: d.latencyUs })}\n`,
          )
          .join('')
      }
    })(),
  )
}

export const TRIAL_COLUMNS = ['run_id', 'run_index', 'run_kind', 'trial_index', 'label', 'cue_sample', 'cue_seconds', 'end_sample', 'outcome', 'decided_class'] as const

export async function trialsCsv(db: Database, scope: ExportScope): Promise<string> {
  const runRows = 'runId' in scope ? await db.select().from(runs).where(eq(runs.id, scope.runId)) : await db.select().from(runs).where(eq(runs.sessionId, scope.sessionId)).orderBy(asc(runs.index))
  const ids = runRows.map((r) => r.id)
  const rows = ids.length ? await db.select().from(trials).where(inArray(trials.runId, ids)).orderBy(asc(trials.index)) : []
  let out = csvLine([...TRIAL_COLUMNS])
  for (const run of runRows) {
    for (const t of rows.filter((r) => r.runId === run.id)) {
      const seconds = t.cueSample !== null && run.rateHz ? t.cueSample / run.rateHz : null
      out += csvLine([run.id, run.index, run.kind, t.index, t.label, t.cueSample, seconds, t.endSample, t.outcome, t.decidedClass])
    }
  }
  return out
}

/**
 * A run's recording from its stored chunks, channel-major. Samples missing from the store (a
 * device gap that was never filled) are written as 0 µV and each gap is named in an annotation,
 * so the file's time axis stays that of the run and nothing is hidden.
 */
export async function runRecording(db: Database, runId: string): Promise<Recording> {
  const [row] = await db.select({ run: runs, session: sessions }).from(runs).innerJoin(sessions, eq(sessions.id, runs.sessionId)).where(eq(runs.id, runId))
  if (!row) throw new ExportError('No such run.')
  const { run } = row
  if (!run.channels?.length || !run.rateHz) throw new ExportError('This run has no recording (no channels or sampling rate).')
  const C = run.channels.length
  const meta = await db
    .select({ firstSample: recordingChunks.firstSample, sampleCount: recordingChunks.sampleCount })
    .from(recordingChunks)
    .where(eq(recordingChunks.runId, runId))
    .orderBy(asc(recordingChunks.firstSample))
  if (meta.length === 0) throw new ExportError('This run has no recorded samples.')
  const total = Math.max(...meta.map((m) => m.firstSample + m.sampleCount))
  if (total * C > MAX_EXPORT_VALUES) throw new ExportError(`The recording has ${total} samples × ${C} channels, more than one export can hold; export it with 'tiller export' in parts.`)
  const data = Array.from({ length: C }, () => new Float32Array(total))
  const covered = new Uint8Array(total)
  let after = -1
  for (;;) {
    const page = await db
      .select()
      .from(recordingChunks)
      .where(and(eq(recordingChunks.runId, runId), gt(recordingChunks.firstSample, after)))
      .orderBy(asc(recordingChunks.firstSample))
      .limit(200)
    for (const chunk of page) {
      if (chunk.channelCount !== C) throw new ExportError(`A chunk at sample ${chunk.firstSample} has ${chunk.channelCount} channels, the run ${C}.`)
      const samples = chunkSamples(chunk.data)
      for (let s = 0; s < chunk.sampleCount; s++) {
        const at = chunk.firstSample + s
        covered[at] = 1
        for (let c = 0; c < C; c++) data[c][at] = samples[s * C + c]
      }
    }
    if (page.length < 200) break
    after = page[page.length - 1].firstSample
  }
  const rate = run.rateHz
  const extra: Annotation[] = []
  for (let s = 0; s < total; ) {
    if (covered[s]) {
      s++
      continue
    }
    const from = s
    while (s < total && !covered[s]) s++
    extra.push({ onsetSeconds: from / rate, durationSeconds: (s - from) / rate, text: `gap: ${s - from} samples not received (written as 0 uV)` })
  }
  const [trialRows, annotationRows, eventRows] = await Promise.all([
    db.select().from(trials).where(eq(trials.runId, runId)).orderBy(asc(trials.index)),
    db.select().from(annotations).where(eq(annotations.runId, runId)).orderBy(asc(annotations.createdAt)),
    db.select().from(sessionEvents).where(eq(sessionEvents.runId, runId)).orderBy(asc(sessionEvents.at)),
  ])
  const cues: Cue[] = trialRows.filter((t) => t.cueSample !== null && t.cueSample < total).map((t) => ({ sample: t.cueSample as number, label: t.label }))
  for (const a of annotationRows) if (a.sample !== null) extra.push({ onsetSeconds: a.sample / rate, durationSeconds: 0, text: `${a.correction ? 'correction: ' : ''}${a.text}`.slice(0, 200) })
  for (const e of eventRows) if (e.sample !== null && e.sample >= 0 && e.sample < total) extra.push({ onsetSeconds: e.sample / rate, durationSeconds: 0, text: `event: ${e.kind}` })
  extra.sort((a, b) => a.onsetSeconds - b.onsetSeconds)
  return {
    channels: run.channels,
    rateHz: rate,
    data,
    cues,
    annotations: extra,
    meta: { patientId: undefined, recordingId: `run-${run.index}`, startDate: run.startedAt ?? row.session.startedAt ?? undefined },
  }
}

export const RECORDING_MEDIA: Record<WritableFormat, string> = { edf: 'application/edf', bdf: 'application/octet-stream', csv: 'text/csv; charset=utf-8' }

export async function runRecordingFile(db: Database, runId: string, format: WritableFormat): Promise<Uint8Array> {
  return writeRecording(await runRecording(db, runId), format)
}

/** The decoder as saved: the engine's JSON-safe Decoder plus Tiller's record of it. */
export async function decoderDocument(db: Database, decoderId: string) {
  const [row] = await db.select().from(decoders).where(eq(decoders.id, decoderId))
  if (!row) throw new ExportError('No such decoder.')
  return {
    id: row.id,
    participantId: row.participantId,
    sessionId: row.sessionId,
    version: row.version,
    method: row.method,
    trainedOnRunIds: row.trainedOnRunIds,
    cvAccuracy: row.cvAccuracy,
    cvKappa: row.cvKappa,
    createdAt: row.createdAt.toISOString(),
    comparison: row.comparison,
    model: row.model,
  }
}

/** A file name safe in a Content-Disposition header. */
export function downloadName(parts: (string | number)[], extension: string): string {
  return `${parts.join('-').replace(/[^A-Za-z0-9._-]+/g, '_')}${extension}`
}

export function attachment(body: BodyInit, fileName: string, contentType: string): Response {
  return new Response(body, {
    headers: { 'Content-Type': contentType, 'Content-Disposition': `attachment; filename="${fileName}"`, 'Cache-Control': 'no-store', 'X-Content-Type-Options': 'nosniff' },
  })
}

// ---------------------------------------------------------------------------------------------
// Download responses for the browser routes and the API (same files, same names).

const RUN_FILES = { 'recording.edf': 'edf', 'recording.bdf': 'bdf', 'recording.csv': 'csv', 'decisions.csv': 'decisions', 'trials.csv': 'trials' } as const
const SESSION_FILES = { 'decisions.csv': 'decisions', 'trials.csv': 'trials' } as const

function notFound(message: string): never {
  throw data({ message }, { status: 404 })
}

export async function exportRunFile(
  context: AppLoadContext,
  user: SessionUser,
  runId: string | undefined,
  file: string | undefined,
  request: Request,
  checkSession: (sessionId: string) => Promise<unknown>,
): Promise<Response> {
  const kind = RUN_FILES[file as keyof typeof RUN_FILES]
  if (!kind) notFound(`No such export. Choose one of ${Object.keys(RUN_FILES).join(', ')}.`)
  const { run } = await requireRunInLab(context, user, runId)
  await checkSession(run.sessionId)
  const { db } = context.services
  await audit(db, { labId: user.labId, actorId: user.id, action: 'export', target: run.id, detail: { file }, ip: clientIp(request) })
  const base = ['run', run.index, run.id.slice(0, 8)]
  if (kind === 'decisions') return attachment(decisionsCsv(db, { runId: run.id }), downloadName([...base, 'decisions'], '.csv'), 'text/csv; charset=utf-8')
  if (kind === 'trials') return attachment(await trialsCsv(db, { runId: run.id }), downloadName([...base, 'trials'], '.csv'), 'text/csv; charset=utf-8')
  try {
    const bytes = await runRecordingFile(db, run.id, kind)
    return attachment(bytes as unknown as BodyInit, downloadName([...base, 'recording'], `.${kind}`), RECORDING_MEDIA[kind])
  } catch (error) {
    if (error instanceof ExportError || error instanceof RecordingFormatError) throw data({ message: error.message }, { status: 422 })
    throw error
  }
}

export async function exportSessionFile(context: AppLoadContext, user: SessionUser, session: { id: string }, file: string | undefined, request: Request): Promise<Response> {
  const kind = SESSION_FILES[file as keyof typeof SESSION_FILES]
  if (!kind) notFound(`No such export. Choose one of ${Object.keys(SESSION_FILES).join(', ')}.`)
  const { db } = context.services
  await audit(db, { labId: user.labId, actorId: user.id, action: 'export', target: session.id, detail: { file }, ip: clientIp(request) })
  const name = downloadName(['session', session.id.slice(0, 8), kind], '.csv')
  if (kind === 'decisions') return attachment(decisionsCsv(db, { sessionId: session.id }), name, 'text/csv; charset=utf-8')
  return attachment(await trialsCsv(db, { sessionId: session.id }), name, 'text/csv; charset=utf-8')
}

export async function exportDecoderFile(context: AppLoadContext, user: SessionUser, file: string | undefined, request: Request): Promise<Response> {
  const id = file?.endsWith('.json') ? file.slice(0, -5) : undefined
  const row = await requireDecoderInLab(context, user, id)
  const { db } = context.services
  await audit(db, { labId: user.labId, actorId: user.id, action: 'export', target: row.id, detail: { file } , ip: clientIp(request) })
  const doc = await decoderDocument(db, row.id)
  return attachment(JSON.stringify(doc, null, 1), downloadName(['decoder', `v${row.version}`, row.method, row.id.slice(0, 8)], '.json'), 'application/json')
}
