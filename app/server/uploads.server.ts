// Importing an earlier recording (EDF, EDF+, BDF, CSV) for a participant. The file part is read
// as a stream of chunks and each chunk goes straight into the engine's incremental parser
// (which checks the header and every record as they come), so a bad file is refused with the
// byte and field that are wrong. Note: @remix-run/form-data-parser 0.17 collects a part's
// chunks before calling the upload handler, so the raw file is in memory once (bounded by
// MAX_UPLOAD_BYTES) beside the decoded samples. CSV is read at the end. Channels are matched to the chosen montage by name, or through the
// mapping the user gave; then one transaction creates the 'imported' session, its calibration
// run, the recording chunks and a trial per cue. Any error rolls everything back.
import { parseFormData, type FileUpload } from '@remix-run/form-data-parser'
import { and, eq } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { auditEvents, montages, participants, protocols, recordingChunks, runs, sessionEvents, sessions, trials } from '~/db/schema'
import { createEdfParser, readCsv, RecordingFormatError, type EdfParser } from '~/engine/formats/index'
import { standardName } from '~/engine/montage'
import type { Recording } from '~/engine/recording'
import type { SessionUser } from '~/server/services'

/** Largest file accepted (EDF/BDF streamed; CSV held in memory up to this size). */
export const MAX_UPLOAD_BYTES = 256 * 1024 * 1024
/** Samples per stored chunk of an imported recording. */
export const IMPORT_CHUNK_SAMPLES = 512

export class UploadError extends Error {
  constructor(
    message: string,
    readonly field: string = '_form',
    readonly status = 400,
  ) {
    super(message)
  }
}

export const uploadFields = z.object({
  participantId: z.string().uuid('Choose the participant'),
  protocolId: z.string().uuid('Choose the protocol'),
  montageId: z.string().uuid('Choose the montage'),
  /** JSON object montage channel -> file channel ('' = not recorded). */
  mapping: z.string().max(20_000).optional().default(''),
  /** Cue labels of the file and their class, e.g. "T1=left, T2=right". */
  cueMap: z.string().max(2000).optional().default(''),
})

export type UploadFields = z.infer<typeof uploadFields>

/** Comparable channel name: the 10-10 name when it is one (e.g. 'EEG C3-REF' -> 'C3'), else lower case. */
export function channelKey(name: string): string {
  return (standardName(name) ?? name.trim()).toLowerCase()
}

/**
 * For each montage channel, the index of the file channel that records it: from the explicit
 * mapping when given, else by name. -1 = not in the file.
 */
export function matchChannels(montageNames: string[], fileNames: string[], mapping: Record<string, string> = {}): number[] {
  const byKey = new Map(fileNames.map((n, i) => [channelKey(n), i]))
  return montageNames.map((m) => {
    if (m in mapping) {
      const target = mapping[m]
      if (target === '') return -1
      const i = fileNames.indexOf(target)
      if (i < 0) throw new UploadError(`The mapping names '${target}' for ${m}, but the file has no such channel.`, 'mapping')
      return i
    }
    return byKey.get(channelKey(m)) ?? -1
  })
}

/** 'T1=left, T2=right' -> { T1: 'left', T2: 'right' }. */
export function parseCueMap(text: string, classes: string[]): Record<string, string> {
  const map: Record<string, string> = {}
  for (const part of text.split(/[,;\n]/).map((p) => p.trim()).filter(Boolean)) {
    const m = /^(.+?)\s*=\s*(.+)$/.exec(part)
    if (!m) throw new UploadError(`Write each cue as LABEL=class, e.g. T1=left; '${part}' is not.`, 'cueMap')
    if (!classes.includes(m[2])) throw new UploadError(`'${m[2]}' is not a class of the protocol (${classes.join(', ')}).`, 'cueMap')
    map[m[1]] = m[2]
  }
  return map
}

interface ReceivedFile {
  name: string
  bytes: number
  recording: Recording
  format: 'edf' | 'bdf' | 'csv'
}

/** Reads the upload's file part as it streams in. */
async function receiveRecording(file: FileUpload, cueLabels: string[] | undefined): Promise<ReceivedFile> {
  const name = file.name || 'recording'
  const reader = file.stream().getReader()
  let parser: EdfParser | null = null
  let csvParts: Uint8Array[] | null = null
  let bytes = 0
  let format: ReceivedFile['format'] = 'edf'
  for (;;) {
    const { value, done } = await reader.read()
    if (done) break
    if (!value || value.length === 0) continue
    if (bytes === 0) {
      const isBdf = value[0] === 0xff
      const isEdf = value[0] === 0x30 // '0' of the version field
      if (isBdf || isEdf) {
        format = isBdf ? 'bdf' : 'edf'
        parser = createEdfParser(cueLabels ? { cueLabels } : {})
      } else if (/\.(csv|txt)$/i.test(name) || /^\uFEFF?\s*"?time/i.test(new TextDecoder().decode(value.subarray(0, 16)))) {
        format = 'csv'
        csvParts = []
      } else {
        throw new UploadError(`'${name}' is not an EDF, BDF or CSV recording: it does not start with an EDF/BDF header or a CSV 'time' column.`, 'recording')
      }
    }
    bytes += value.length
    if (parser) parser.push(value)
    else csvParts!.push(value)
  }
  if (bytes === 0) throw new UploadError(`'${name}' is empty.`, 'recording')
  let recording: Recording
  if (parser) recording = parser.end()
  else {
    const all = new Uint8Array(bytes)
    let at = 0
    for (const p of csvParts!) {
      all.set(p, at)
      at += p.length
    }
    recording = readCsv(all, cueLabels ? { cueLabels } : {})
  }
  return { name, bytes, recording, format }
}

export interface ParsedUpload {
  fields: UploadFields
  file: ReceivedFile
}

/** Parses the multipart request; format errors name the file's problem. */
export async function parseUpload(request: Request): Promise<ParsedUpload> {
  let received: ReceivedFile | null = null
  let fileError: unknown = null
  const length = Number(request.headers.get('Content-Length') ?? 0)
  if (length > MAX_UPLOAD_BYTES + 1024 * 1024) throw new UploadError(`The file is larger than the ${MAX_UPLOAD_BYTES / 1024 / 1024} MB limit.`, 'recording', 413)
  let form: FormData
  try {
    form = await parseFormData(request, { maxFileSize: MAX_UPLOAD_BYTES, maxFiles: 1 }, async (file) => {
      if (file.fieldName !== 'recording') return null
      try {
        // Cue labels for the file come from the cue map, which may arrive after the file;
        // all annotations are kept and cues re-selected after parsing (see selectCues).
        received = await receiveRecording(file, undefined)
      } catch (error) {
        fileError = error
        // Drain the rest of the part so the request completes and the message can be shown.
        await file.arrayBuffer().catch(() => undefined)
      }
      return null
    })
  } catch (error) {
    const message = (error as Error).message ?? String(error)
    if (/exceed/i.test(message) || (error as Error).name?.includes('Exceeded')) throw new UploadError(`The file is larger than the ${MAX_UPLOAD_BYTES / 1024 / 1024} MB limit.`, 'recording', 413)
    throw new UploadError(`The upload could not be read: ${message}`, 'recording')
  }
  if (fileError) {
    if (fileError instanceof RecordingFormatError) {
      const where = fileError.offset !== undefined ? ` (byte ${fileError.offset})` : fileError.line !== undefined ? ` (line ${fileError.line})` : ''
      throw new UploadError(`${fileError.format.toUpperCase()} file refused${fileError.field ? `, ${fileError.field}` : ''}${where}: ${fileError.message}`, 'recording', 422)
    }
    throw fileError
  }
  const values: Record<string, string> = {}
  for (const [k, v] of form.entries()) if (typeof v === 'string') values[k] = v
  const parsed = uploadFields.safeParse(values)
  if (!parsed.success) {
    const issue = parsed.error.issues[0]
    throw new UploadError(issue.message, String(issue.path[0] ?? '_form'))
  }
  if (!received) throw new UploadError('Choose a recording file.', 'recording')
  return { fields: parsed.data, file: received }
}

/** The file's cues in the protocol's classes: by cue map, else annotations named like a class. */
export function selectCues(recording: Recording, classes: string[], cueMap: Record<string, string>) {
  const rate = recording.rateHz
  const n = recording.data[0]?.length ?? 0
  const candidates = [
    ...recording.cues.map((c) => ({ sample: c.sample, text: c.label })),
    ...recording.annotations.map((a) => ({ sample: Math.round(a.onsetSeconds * rate), text: a.text.trim() })),
  ]
  const cues = candidates
    .map((c) => ({ sample: c.sample, label: cueMap[c.text] ?? (classes.includes(c.text) ? c.text : null) }))
    .filter((c): c is { sample: number; label: string } => c.label !== null && c.sample >= 0 && c.sample < n)
    .sort((a, b) => a.sample - b.sample)
  const labels = [...new Set(candidates.map((c) => c.text))].slice(0, 12)
  return { cues, labels }
}

export interface ImportPlan {
  montageNames: string[]
  fileChannels: string[]
  match: number[]
  needsMapping: boolean
}

export interface ImportResult {
  sessionId: string
  runId: string
  channels: string[]
  samples: number
  rateHz: number
  trials: number
  format: string
}

/**
 * Checks the upload against the lab's records and imports it in one transaction. Throws
 * UploadError (nothing written) when the channels need a mapping or the file has no usable cues.
 */
export async function importRecording(db: Database, actor: SessionUser, upload: ParsedUpload, ip: string | null): Promise<ImportResult | { needsMapping: ImportPlan }> {
  const { fields, file } = upload
  const rec = file.recording
  const [[participant], [protocol], [montage]] = await Promise.all([
    db.select().from(participants).where(and(eq(participants.id, fields.participantId), eq(participants.labId, actor.labId))),
    db.select().from(protocols).where(and(eq(protocols.id, fields.protocolId), eq(protocols.labId, actor.labId))),
    db.select().from(montages).where(and(eq(montages.id, fields.montageId), eq(montages.labId, actor.labId))),
  ])
  if (!participant) throw new UploadError('No such participant in this lab.', 'participantId')
  if (!protocol) throw new UploadError('No such protocol in this lab.', 'protocolId')
  if (!montage) throw new UploadError('No such montage in this lab.', 'montageId')
  if (!(rec.rateHz > 0) || rec.data.length === 0 || rec.data[0].length === 0) throw new UploadError(`'${file.name}' holds no samples.`, 'recording')

  let mapping: Record<string, string> = {}
  if (fields.mapping) {
    try {
      const raw = JSON.parse(fields.mapping) as unknown
      mapping = z.record(z.string(), z.string()).parse(raw)
    } catch {
      throw new UploadError('The channel mapping is not valid.', 'mapping')
    }
  }
  const montageNames = montage.channels.map((c) => c.name)
  const match = matchChannels(montageNames, rec.channels, mapping)
  const used = match.filter((i) => i >= 0)
  if (new Set(used).size !== used.length) throw new UploadError('Two montage channels are mapped to the same file channel.', 'mapping')
  const unmatched = montageNames.filter((_, k) => match[k] < 0 && !(montageNames[k] in mapping))
  if (unmatched.length > 0) return { needsMapping: { montageNames, fileChannels: rec.channels, match, needsMapping: true } }
  if (used.length < 2) throw new UploadError('At least two montage channels must be recorded in the file.', 'mapping')

  const cueMap = parseCueMap(fields.cueMap, protocol.classes)
  const { cues, labels } = selectCues(rec, protocol.classes, cueMap)
  if (cues.length === 0) {
    throw new UploadError(
      `No cues of the protocol's classes (${protocol.classes.join(', ')}) in '${file.name}'. Annotations found: ${labels.length ? labels.join(', ') : 'none'}. Map them, e.g. "${labels[0] ?? 'T1'}=${protocol.classes[0]}".`,
      'cueMap',
    )
  }
  const perClass = protocol.classes.map((c) => cues.filter((q) => q.label === c).length)
  if (perClass.filter((n) => n > 0).length < 2) throw new UploadError(`Training needs cues of at least two classes; this file has ${protocol.classes.map((c, i) => `${perClass[i]} ${c}`).join(', ')}.`, 'cueMap')

  // Channels of the run: the montage's that are recorded, in montage order.
  const kept = montageNames.map((name, k) => ({ name, source: match[k] })).filter((c) => c.source >= 0)
  const C = kept.length
  const total = rec.data[0].length
  const imagerySamples = Math.round(protocol.imagerySeconds * rec.rateHz)
  const startedAt = rec.meta?.startDate ?? new Date()

  return db.transaction(async (tx) => {
    const [session] = await tx
      .insert(sessions)
      .values({
        labId: actor.labId,
        participantId: participant.id,
        operatorId: actor.role === 'operator' ? actor.id : null,
        protocolId: protocol.id,
        montageId: montage.id,
        status: 'imported',
        startedAt,
        endedAt: new Date(startedAt.getTime() + (total / rec.rateHz) * 1000),
        notes: `Imported from ${file.name} (${file.format.toUpperCase()}, ${file.bytes} bytes).`,
      })
      .returning()
    const [run] = await tx
      .insert(runs)
      .values({ sessionId: session.id, kind: 'calibration', index: 1, status: 'completed', source: 'upload', rateHz: rec.rateHz, channels: kept.map((c) => c.name), startedAt, endedAt: session.endedAt, sampleCount: total })
      .returning()
    let batch: (typeof recordingChunks.$inferInsert)[] = []
    for (let first = 0; first < total; first += IMPORT_CHUNK_SAMPLES) {
      const count = Math.min(IMPORT_CHUNK_SAMPLES, total - first)
      const block = new Float32Array(count * C)
      for (let s = 0; s < count; s++) for (let c = 0; c < C; c++) block[s * C + c] = rec.data[kept[c].source][first + s]
      batch.push({ runId: run.id, firstSample: first, sampleCount: count, channelCount: C, data: new Uint8Array(block.buffer) })
      if (batch.length === 64) {
        await tx.insert(recordingChunks).values(batch)
        batch = []
      }
    }
    if (batch.length) await tx.insert(recordingChunks).values(batch)
    await tx.insert(trials).values(cues.map((c, i) => ({ runId: run.id, index: i, label: c.label, cueSample: c.sample, endSample: Math.min(total, c.sample + imagerySamples), outcome: 'recorded' as const })))
    await tx.insert(sessionEvents).values({ sessionId: session.id, runId: run.id, kind: 'imported', sample: 0, detail: { file: file.name, format: file.format, bytes: file.bytes, fileChannels: rec.channels, mapping } })
    await tx.insert(auditEvents).values({ labId: actor.labId, actorId: actor.id, action: 'recording.import', target: session.id, detail: { file: file.name, bytes: file.bytes, trials: cues.length }, ip })
    return { sessionId: session.id, runId: run.id, channels: kept.map((c) => c.name), samples: total, rateHz: rec.rateHz, trials: cues.length, format: file.format }
  })
}

/** Choices for the upload form. */
export async function uploadFormOptions(db: Database, labId: string) {
  const [ps, protos, monts] = await Promise.all([
    db.select({ id: participants.id, label: participants.code }).from(participants).where(eq(participants.labId, labId)).orderBy(participants.code),
    db.select({ id: protocols.id, label: protocols.name, classes: protocols.classes }).from(protocols).where(eq(protocols.labId, labId)).orderBy(protocols.name),
    db.select({ id: montages.id, label: montages.name, channels: montages.channels }).from(montages).where(eq(montages.labId, labId)).orderBy(montages.name),
  ])
  return { participants: ps, protocols: protos.map((p) => ({ id: p.id, label: `${p.label} (${p.classes.join(', ')})` })), montages: monts.map((m) => ({ id: m.id, label: `${m.label} · ${m.channels.length} channels`, channels: m.channels.map((c) => c.name) })) }
}
