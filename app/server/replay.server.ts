// Replay: a recorded run's raw samples (recording_chunks) pushed again through a decoder of the
// same participant with the engine's createOnlineDecoder, read out at the same block ends as
// the live log, and set beside what happened live. With the live decoder the replayed log must
// equal the live one number for number; with another decoder it is the "what if".
//
// Block alignment: the online decoder works sample by sample (filter state, sliding window), so
// its output after a sample does not depend on how the samples were cut into blocks; what
// matters is where the output is read. Live writes one decision per output at the index of the
// last sample it used (decisions.sample), so replay reads the output at exactly those samples.
// A run without live decisions (calibration, import) is read at the end of every stored chunk.
import { and, asc, eq, gt } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { decisions, decoders, protocols, recordingChunks, runs, sessions, trials } from '~/db/schema'
import type { Decoder } from '~/engine/decoder'
import { createOnlineDecoder, type OnlineOutput } from '~/engine/online'
import { addVote, emptyTally, scoreTrial } from '~/live/trial-scoring'
import { chunkSamples, feedbackRunMetrics, secondsPerTrialOf, type RunMetrics, type TrialRow } from '~/server/review.server'

/** Winner's share of a trial's decisions below which the trial is a timeout (as live scoring). */
export const REPLAY_MIN_SHARE = 0.5
/** Chunks read from the database per query. */
const CHUNK_PAGE = 50
/** Work between yields to the event loop, so a long replay never stalls other requests. */
const YIELD_EVERY_MS = 2

export class ReplayError extends Error {}

export interface ReplayDecision {
  sample: number
  output: number
  probability: number
  decidedClass: string
  trialIndex: number | null
}

export interface StoredChunk {
  firstSample: number
  sampleCount: number
  channelCount: number
  data: Uint8Array
}

/**
 * Column order that takes the run's channels to the decoder's, or null when they already agree.
 * Every decoder channel must be in the run.
 */
export function channelOrder(runChannels: string[], decoderChannels: string[]): number[] | null {
  const index = new Map(runChannels.map((name, i) => [name.toLowerCase(), i]))
  const missing = decoderChannels.filter((name) => !index.has(name.toLowerCase()))
  if (missing.length) throw new ReplayError(`the run has no ${missing.join(', ')}: this decoder needs channels ${decoderChannels.join(', ')}`)
  const order = decoderChannels.map((name) => index.get(name.toLowerCase()) as number)
  const identity = order.length === runChannels.length && order.every((v, i) => v === i)
  return identity ? null : order
}

/**
 * The core, free of the database: pushes chunks through a fresh online decoder and reads the
 * output at every sample in `readAt` (ascending). Without `readAt`, at the end of every chunk.
 */
export async function replayChunks(
  decoder: Decoder,
  runChannels: string[],
  chunks: AsyncIterable<StoredChunk> | Iterable<StoredChunk>,
  readAt: number[] | null,
  trialOf: (sample: number) => number | null,
): Promise<ReplayDecision[]> {
  if (decoder.channels.length === 0) throw new ReplayError('the decoder has no channels')
  const order = channelOrder(runChannels, decoder.channels)
  const C = runChannels.length
  const D = decoder.channels.length
  const online = createOnlineDecoder(decoder)
  const out: ReplayDecision[] = []
  let next = 0
  let reordered = new Float32Array(0)
  let lastYield = performance.now()
  // push() hands back one reused result object: read it before the next push.
  let last: OnlineOutput | null = null
  for await (const chunk of chunks) {
    if (chunk.channelCount !== C) throw new ReplayError(`a chunk at sample ${chunk.firstSample} has ${chunk.channelCount} channels, the run ${C}`)
    let samples = chunkSamples(chunk.data)
    if (order) {
      if (reordered.length < chunk.sampleCount * D) reordered = new Float32Array(chunk.sampleCount * D)
      for (let s = 0; s < chunk.sampleCount; s++) for (let d = 0; d < D; d++) reordered[s * D + d] = samples[s * C + order[d]]
      samples = reordered
    }
    const end = chunk.firstSample + chunk.sampleCount
    let pos = 0
    const emit = (sample: number) => {
      const r = last
      if (r && r.ready) out.push({ sample, output: r.output, probability: r.probability, decidedClass: r.className, trialIndex: trialOf(sample) })
    }
    if (readAt) {
      while (next < readAt.length && readAt[next] < chunk.firstSample) next++ // read points inside a gap: nothing to read
      while (next < readAt.length && readAt[next] < end) {
        const upto = readAt[next] - chunk.firstSample + 1
        last = online.push(samples.subarray(pos * D, upto * D), upto - pos)
        pos = upto
        emit(readAt[next])
        next++
      }
      if (pos < chunk.sampleCount) last = online.push(samples.subarray(pos * D, chunk.sampleCount * D), chunk.sampleCount - pos)
    } else {
      last = online.push(samples.subarray(0, chunk.sampleCount * D), chunk.sampleCount)
      emit(end - 1)
    }
    if (performance.now() - lastYield > YIELD_EVERY_MS) {
      await new Promise((resolve) => setImmediate(resolve))
      lastYield = performance.now()
    }
  }
  return out
}

async function* storedChunks(db: Database, runId: string): AsyncGenerator<StoredChunk> {
  let after = -1
  for (;;) {
    const page = await db
      .select({ firstSample: recordingChunks.firstSample, sampleCount: recordingChunks.sampleCount, channelCount: recordingChunks.channelCount, data: recordingChunks.data })
      .from(recordingChunks)
      .where(and(eq(recordingChunks.runId, runId), gt(recordingChunks.firstSample, after)))
      .orderBy(asc(recordingChunks.firstSample))
      .limit(CHUNK_PAGE)
    for (const c of page) yield c
    if (page.length < CHUNK_PAGE) return
    after = page[page.length - 1].firstSample
  }
}

export interface ReplayComparison {
  /** decisions compared (present in both logs at the same sample) */
  compared: number
  /** of those, identical output, probability and class */
  identical: number
  sameClass: number
  maxOutputDifference: number
  liveOnly: number
  replayOnly: number
  firstDifference: { sample: number; live: { output: number; probability: number; decidedClass: string }; replay: { output: number; probability: number; decidedClass: string } } | null
}

export function compareLogs(live: ReplayDecision[], replay: ReplayDecision[]): ReplayComparison {
  const bySample = new Map(replay.map((d) => [d.sample, d]))
  let compared = 0
  let identical = 0
  let sameClass = 0
  let maxDiff = 0
  let firstDifference: ReplayComparison['firstDifference'] = null
  for (const l of live) {
    const r = bySample.get(l.sample)
    if (!r) continue
    compared++
    if (r.decidedClass === l.decidedClass) sameClass++
    const diff = Math.abs(r.output - l.output)
    if (diff > maxDiff) maxDiff = diff
    if (r.output === l.output && r.probability === l.probability && r.decidedClass === l.decidedClass) identical++
    else if (!firstDifference) {
      firstDifference = {
        sample: l.sample,
        live: { output: l.output, probability: l.probability, decidedClass: l.decidedClass },
        replay: { output: r.output, probability: r.probability, decidedClass: r.decidedClass },
      }
    }
  }
  return { compared, identical, sameClass, maxOutputDifference: maxDiff, liveOnly: live.length - compared, replayOnly: replay.length - compared, firstDifference }
}

/** Trial outcomes from a decision log, scored as live scores them (app/live/trial-scoring.ts). */
export function scoreTrials(classes: string[], trialRows: TrialRow[], log: ReplayDecision[]): TrialRow[] {
  const tallies = new Map(trialRows.map((t) => [t.index, emptyTally(classes.length)]))
  for (const d of log) if (d.trialIndex !== null) {
    const tally = tallies.get(d.trialIndex)
    if (tally) addVote(tally, classes.indexOf(d.decidedClass))
  }
  return trialRows.map((t) => {
    const scored = scoreTrial(tallies.get(t.index)!, classes.indexOf(t.label), REPLAY_MIN_SHARE)
    return { ...t, outcome: scored.outcome, decidedClass: scored.decidedIndex === null ? null : classes[scored.decidedIndex] }
  })
}

export interface ReplayResult {
  runId: string
  runKind: 'calibration' | 'feedback'
  rateHz: number
  decoder: { id: string; version: number; method: string }
  liveDecoderId: string | null
  sameDecoder: boolean
  classes: string[]
  /** the read points: live decision samples, or chunk ends when the run has no live log */
  alignment: 'live-decisions' | 'chunk-ends'
  replay: ReplayDecision[]
  live: ReplayDecision[]
  comparison: ReplayComparison
  trials: { index: number; label: string; live: { outcome: string; decidedClass: string | null }; replay: { outcome: string; decidedClass: string | null } }[]
  metrics: { live: RunMetrics | null; replay: RunMetrics | null }
  elapsedMs: number
}

/**
 * Replays a run of the lab through one of the participant's decoders. Throws ReplayError with
 * a readable message when the run or decoder does not fit (other participant, other rate,
 * missing channels, no recording).
 */
export async function replayRun(db: Database, labId: string, runId: string, decoderId: string, only?: { sessionId?: string }): Promise<ReplayResult> {
  const started = performance.now()
  const [row] = await db
    .select({ run: runs, session: sessions, protocol: protocols })
    .from(runs)
    .innerJoin(sessions, eq(sessions.id, runs.sessionId))
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .where(and(eq(runs.id, runId), eq(sessions.labId, labId)))
  if (!row) throw new ReplayError('No such run.')
  if (only?.sessionId && row.session.id !== only.sessionId) throw new ReplayError('That run is not part of this session.')
  const [decoderRow] = await db.select().from(decoders).where(and(eq(decoders.id, decoderId), eq(decoders.labId, labId)))
  if (!decoderRow) throw new ReplayError('No such decoder.')
  if (decoderRow.participantId !== row.session.participantId) throw new ReplayError('That decoder belongs to another participant; replay uses decoders of the run’s participant.')
  const decoder = decoderRow.model as unknown as Decoder
  const { run } = row
  if (!run.channels?.length || !run.rateHz) throw new ReplayError('This run has no recording to replay.')
  if (Math.abs(decoder.rateHz - run.rateHz) > 1e-9) throw new ReplayError(`The decoder was trained at ${decoder.rateHz} Hz, the run was recorded at ${run.rateHz} Hz.`)

  const liveRows = await db
    .select({ sample: decisions.sample, output: decisions.output, probability: decisions.probability, decidedClass: decisions.decidedClass, trialIndex: decisions.trialIndex })
    .from(decisions)
    .where(eq(decisions.runId, runId))
    .orderBy(asc(decisions.sample))
  const trialRows: TrialRow[] = (await db.select().from(trials).where(eq(trials.runId, runId)).orderBy(asc(trials.index))).map((t) => ({
    index: t.index,
    label: t.label,
    cueSample: t.cueSample,
    endSample: t.endSample,
    outcome: t.outcome,
    decidedClass: t.decidedClass,
  }))
  const liveTrial = new Map(liveRows.map((d) => [d.sample, d.trialIndex]))
  // Trials by their imagery span (cue onset to end) when there is no live log to follow.
  const spans = trialRows.filter((t) => t.cueSample !== null && t.endSample !== null)
  const trialOf = liveRows.length
    ? (sample: number) => liveTrial.get(sample) ?? null
    : (sample: number) => spans.find((t) => sample >= (t.cueSample as number) && sample < (t.endSample as number))?.index ?? null

  const replay = await replayChunks(decoder, run.channels, storedChunks(db, runId), liveRows.length ? liveRows.map((d) => d.sample) : null, trialOf)
  if (replay.length === 0 && liveRows.length === 0) {
    const [any] = await db.select({ id: recordingChunks.id }).from(recordingChunks).where(eq(recordingChunks.runId, runId)).limit(1)
    if (!any) throw new ReplayError('This run has no recorded samples to replay.')
  }
  const classes = decoder.classes
  const replayTrials = scoreTrials(classes, trialRows, replay)
  const secondsPerTrial = secondsPerTrialOf(trialRows, run.rateHz, row.protocol)
  const liveScored = run.kind === 'feedback' && liveRows.length > 0
  return {
    runId,
    runKind: run.kind,
    rateHz: run.rateHz,
    decoder: { id: decoderRow.id, version: decoderRow.version, method: decoderRow.method },
    liveDecoderId: run.decoderId,
    sameDecoder: run.decoderId === decoderRow.id,
    classes,
    alignment: liveRows.length ? 'live-decisions' : 'chunk-ends',
    replay,
    live: liveRows,
    comparison: compareLogs(liveRows, replay),
    trials: trialRows.map((t, i) => ({
      index: t.index,
      label: t.label,
      live: { outcome: t.outcome, decidedClass: t.decidedClass },
      replay: { outcome: replayTrials[i].outcome, decidedClass: replayTrials[i].decidedClass },
    })),
    metrics: {
      live: liveScored ? feedbackRunMetrics(classes, trialRows, secondsPerTrial) : null,
      replay: feedbackRunMetrics(classes, replayTrials, secondsPerTrial),
    },
    elapsedMs: performance.now() - started,
  }
}

/** Points of the live/replay overlay sent to the browser. */
export const REPLAY_CHART_POINTS = 3000

/** What the review page shows of a replay: figures, trials and a thinned output overlay. */
export interface ReplayView extends Omit<ReplayResult, 'replay' | 'live'> {
  replayCount: number
  liveCount: number
  chart: { sample: number[]; live: (number | null)[]; replay: (number | null)[] }
}

export function replayView(result: ReplayResult): ReplayView {
  const { replay, live, ...rest } = result
  const liveBySample = new Map(live.map((d) => [d.sample, d.output]))
  const stride = Math.max(1, Math.ceil(replay.length / REPLAY_CHART_POINTS))
  const picked = replay.filter((_, i) => i % stride === 0)
  return {
    ...rest,
    replayCount: replay.length,
    liveCount: live.length,
    chart: { sample: picked.map((d) => d.sample), live: picked.map((d) => liveBySample.get(d.sample) ?? null), replay: picked.map((d) => d.output) },
  }
}
