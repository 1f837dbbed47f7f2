// Decoder training from recorded runs: reads the runs' chunks and trials into the engine's
// Recording, runs the method comparison and the fit in a worker thread, and stores the result
// as a new decoder version for the participant. The operator activates a decoder separately.
import { randomUUID } from 'node:crypto'
import { Worker } from 'node:worker_threads'
import { and, asc, eq, inArray, max, sql } from 'drizzle-orm'
import type { Database } from '../db/client.server.ts'
import { decoders, runs, sessions, trials } from '../db/schema.ts'
import type { ComparisonRow, Decoder, TrainOptions } from '../engine/decoder.ts'
import type { Recording } from '../engine/recording.ts'
import type { SpatialMethodName } from '../engine/spatial/types.ts'
import type { TrainingInfo } from './events.ts'

export interface TrainingRequest {
  sessionId: string
  labId: string
  participantId: string
  runIds: string[]
  method: SpatialMethodName | null
  options: TrainOptions
  createdBy: string | null
}

export class TrainingError extends Error {
  override name = 'LiveError'
  readonly status = 422
}

/** Reads runs (in the given order) into one recording; cue samples are offset run by run. */
export async function loadRecording(db: Database, runIds: string[]): Promise<Recording> {
  if (runIds.length === 0) throw new TrainingError('choose at least one recorded run')
  const rows = await db.select().from(runs).where(inArray(runs.id, runIds))
  const byId = new Map(rows.map((r) => [r.id, r]))
  const ordered = runIds.map((id) => {
    const run = byId.get(id)
    if (!run) throw new TrainingError(`run ${id} does not exist`)
    if (!run.channels || !run.rateHz) throw new TrainingError(`run ${run.index} has no recording`)
    return run
  })
  const channels = ordered[0].channels!
  const rateHz = ordered[0].rateHz!
  for (const run of ordered) {
    if (run.rateHz !== rateHz || run.channels!.join(',') !== channels.join(',')) throw new TrainingError(`run ${run.index} was recorded with other channels or another rate`)
    if (run.status === 'running' || run.status === 'paused') throw new TrainingError(`run ${run.index} is still in progress`)
  }
  const total = ordered.reduce((n, r) => n + r.sampleCount, 0)
  if (total === 0) throw new TrainingError('the chosen runs hold no samples')
  const C = channels.length
  const data = channels.map(() => new Float32Array(total))
  const cues: Recording['cues'] = []
  let offset = 0
  for (const run of ordered) {
    // base64 out of the database is far cheaper to move than a bytea value (see decision-log).
    const result = await db.execute(
      sql`select first_sample, sample_count, channel_count, encode(data, 'base64') as d from recording_chunks where run_id = ${run.id} order by first_sample, id`,
    )
    for (const chunk of (result as unknown as { rows: { first_sample: string | number; sample_count: number; channel_count: number; d: string }[] }).rows) {
      if (chunk.channel_count !== C) throw new TrainingError(`run ${run.index} has a chunk with ${chunk.channel_count} channels`)
      const bytes = Buffer.from(chunk.d, 'base64')
      const values = new Float32Array(bytes.buffer, bytes.byteOffset, bytes.byteLength / 4)
      const first = Number(chunk.first_sample)
      for (let s = 0; s < chunk.sample_count; s++) {
        const at = offset + first + s
        if (at >= offset + run.sampleCount) break
        for (let c = 0; c < C; c++) data[c][at] = values[s * C + c]
      }
    }
    const runTrials = await db.select().from(trials).where(eq(trials.runId, run.id)).orderBy(asc(trials.index))
    for (const t of runTrials) if (t.cueSample !== null && t.outcome !== 'pending') cues.push({ sample: offset + t.cueSample, label: t.label })
    offset += run.sampleCount
  }
  return { channels, rateHz, data, cues, annotations: [] }
}

interface TrainingResult {
  decoder: Decoder
  comparison: ComparisonRow[]
}

function runInWorker(job: { recording: Recording; options: TrainOptions; method: SpatialMethodName | null }): Promise<TrainingResult> {
  return new Promise((resolve, reject) => {
    const worker = new Worker(new URL('./worker-boot.mjs', import.meta.url), {
      workerData: { entry: new URL('./training-worker.ts', import.meta.url).href, job: { ...job, methods: null } },
      name: 'tiller-training',
    })
    worker.once('message', (m: { ok: true; decoder: Decoder; comparison: ComparisonRow[] } | { ok: false; error: string }) => {
      void worker.terminate()
      if (m.ok) resolve({ decoder: m.decoder, comparison: m.comparison })
      else reject(new TrainingError(m.error))
    })
    worker.once('error', (e) => reject(e))
    worker.once('exit', (code) => code !== 0 && reject(new TrainingError(`training stopped unexpectedly (exit ${code})`)))
  })
}

export class TrainingJobs {
  private jobs = new Map<string, TrainingInfo>()

  constructor(
    private readonly db: Database,
    private readonly publish: (sessionId: string, info: TrainingInfo) => void,
  ) {}

  /** The job, only when it belongs to the session asked about (ids are not a credential). */
  get(jobId: string, sessionId: string): TrainingInfo | undefined {
    if (this.jobSessions.get(jobId) !== sessionId) return undefined
    return this.jobs.get(jobId)
  }

  /** Session of each job. */
  private jobSessions = new Map<string, string>()

  running(sessionId: string): boolean {
    return [...this.jobs.values()].some((j) => (j.state === 'queued' || j.state === 'running') && this.jobSessions.get(j.jobId) === sessionId)
  }

  /** Starts a job and returns at once; progress goes to the operator stream. */
  async start(request: TrainingRequest): Promise<TrainingInfo> {
    if (this.running(request.sessionId)) throw new TrainingError('a decoder is already being trained for this session')
    // Load before answering, so a bad choice of runs is a clear error to the form.
    const recording = await loadRecording(this.db, request.runIds)
    if (recording.cues.length === 0) throw new TrainingError('the chosen runs have no completed trials')
    const info: TrainingInfo = { jobId: randomUUID(), state: 'running', runIds: request.runIds, decoderId: null, error: null }
    this.jobs.set(info.jobId, info)
    this.jobSessions.set(info.jobId, request.sessionId)
    this.publish(request.sessionId, { ...info })
    void runInWorker({ recording, options: request.options, method: request.method })
      .then(async ({ decoder, comparison }) => {
        const [{ last }] = await this.db.select({ last: max(decoders.version) }).from(decoders).where(eq(decoders.participantId, request.participantId))
        const [row] = await this.db
          .insert(decoders)
          .values({
            labId: request.labId,
            participantId: request.participantId,
            sessionId: request.sessionId,
            version: (last ?? 0) + 1,
            method: decoder.method,
            trainedOnRunIds: request.runIds,
            model: decoder as unknown as Record<string, unknown>,
            cvAccuracy: decoder.cv.accuracy,
            cvKappa: decoder.cv.kappa,
            comparison,
            createdBy: request.createdBy,
          })
          .returning({ id: decoders.id })
        info.state = 'done'
        info.decoderId = row.id
      })
      .catch((error: unknown) => {
        info.state = 'failed'
        info.error = error instanceof Error ? error.message : String(error)
      })
      .finally(() => this.publish(request.sessionId, { ...info }))
    return { ...info }
  }

  /** Waits for a job (tests and the command line). */
  async wait(jobId: string, timeoutMs = 120_000): Promise<TrainingInfo> {
    const until = Date.now() + timeoutMs
    for (;;) {
      const job = this.jobs.get(jobId)
      if (!job) throw new TrainingError('no such training job')
      if (job.state === 'done' || job.state === 'failed') return { ...job }
      if (Date.now() > until) throw new TrainingError('training did not finish in time')
      await new Promise((r) => setTimeout(r, 50))
    }
  }
}

/** Runs a decoder may be trained on: finished recorded runs of the participant, in any of their sessions, newest first. */
export async function trainableRuns(db: Database, participantId: string, labId: string) {
  return db
    .select({
      id: runs.id,
      sessionId: runs.sessionId,
      sessionStartedAt: sessions.startedAt,
      index: runs.index,
      kind: runs.kind,
      status: runs.status,
      source: runs.source,
      sampleCount: runs.sampleCount,
      rateHz: runs.rateHz,
      startedAt: runs.startedAt,
    })
    .from(runs)
    .innerJoin(sessions, eq(sessions.id, runs.sessionId))
    .where(and(eq(sessions.participantId, participantId), eq(sessions.labId, labId), inArray(runs.status, ['completed', 'stopped', 'interrupted']), sql`${runs.sampleCount} > 0`))
    .orderBy(sql`${runs.startedAt} desc nulls last`)
}
