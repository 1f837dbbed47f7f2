// Test and demo data for the review screens: one ended session of a participant with a
// simulated calibration run, a decoder trained on it by the engine, and a feedback run whose
// decision log was made the way the live loop makes it — the raw recording pushed block by
// block (16 samples) through createOnlineDecoder, one decision per block. The data are
// invented (simulated participant), for tests and the demo only.
import { and, eq, sql } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { decisions, decoders, montages, participants, protocols, recordingChunks, runs, sessionEvents, sessions, trials, users } from '~/db/schema'
import { trainDecoder, type Decoder } from '~/engine/decoder'
import { createOnlineDecoder } from '~/engine/online'
import type { Recording } from '~/engine/recording'
import { addVote, emptyTally, scoreTrial } from '~/live/trial-scoring'
import { simulateRecording } from '../../simulator/simulated-recording'

export const SEED_BLOCK_SAMPLES = 16
export const SEED_RATE_HZ = 250
/** Samples per stored chunk (a whole number of blocks, as the live recorder batches them). */
export const SEED_CHUNK_SAMPLES = SEED_BLOCK_SAMPLES * 16

export interface SeededSession {
  sessionId: string
  participantId: string
  calibrationRunId: string
  feedbackRunId: string
  decoderId: string
  /** A second decoder of the same participant (another method), for replay comparisons. */
  otherDecoderId: string
  decoder: Decoder
}

/** Interleaved sample-major float32 LE bytes of samples [from, to) of a channel-major recording. */
export function interleave(recording: Recording, from: number, to: number): Uint8Array {
  const C = recording.channels.length
  const out = new Float32Array((to - from) * C)
  for (let s = from; s < to; s++) for (let c = 0; c < C; c++) out[(s - from) * C + c] = recording.data[c][s]
  return new Uint8Array(out.buffer)
}

async function storeRecording(db: Database, runId: string, recording: Recording): Promise<void> {
  const n = recording.data[0].length
  const rows = []
  for (let s = 0; s < n; s += SEED_CHUNK_SAMPLES) {
    const to = Math.min(n, s + SEED_CHUNK_SAMPLES)
    rows.push({ runId, firstSample: s, sampleCount: to - s, channelCount: recording.channels.length, data: interleave(recording, s, to) })
  }
  for (let i = 0; i < rows.length; i += 100) await db.insert(recordingChunks).values(rows.slice(i, i + 100))
}

export async function seedReviewSession(
  db: Database,
  labId: string,
  options: { participantCode?: string; seed?: number; trialsPerClass?: number; startedAt?: Date; erdDepth?: number } = {},
): Promise<SeededSession> {
  const seed = options.seed ?? 7
  const trialsPerClass = options.trialsPerClass ?? 15
  const [participant] = await db.select().from(participants).where(and(eq(participants.labId, labId), eq(participants.code, options.participantCode ?? 'HS-014')))
  const [protocol] = await db.select().from(protocols).where(eq(protocols.labId, labId))
  const labMontages = await db.select().from(montages).where(eq(montages.labId, labId))
  const montage = labMontages.find((m) => m.channels.length === 16) ?? labMontages[0]
  const [operator] = await db.select().from(users).where(and(eq(users.labId, labId), eq(users.role, 'operator')))
  const channelNames = montage.channels.map((c) => c.name)
  const startedAt = options.startedAt ?? new Date('2026-11-03T09:00:00Z')

  // One simulated participant for both runs (the seed fixes the head model): the first half of
  // the trials is the calibration run, the second half the feedback run.
  const whole = simulateRecording({ channels: channelNames, rateHz: SEED_RATE_HZ, seed, classes: protocol.classes, trialsPerClass: trialsPerClass * 2, participant: options.erdDepth === undefined ? { skill: 0.9 } : { skill: 0.9, erdDepth: options.erdDepth } }).recording
  const half = whole.cues[whole.cues.length / 2].sample - 2 * SEED_RATE_HZ
  const slice = (from: number, to: number): Recording => ({
    ...whole,
    data: whole.data.map((d) => d.slice(from, to)),
    cues: whole.cues.filter((c) => c.sample >= from && c.sample < to).map((c) => ({ ...c, sample: c.sample - from })),
    annotations: [],
  })
  const calibration = slice(0, half)
  const feedback = slice(half, whole.data[0].length)
  const [{ maxVersion }] = await db
    .select({ maxVersion: sql<number>`coalesce(max(${decoders.version}), 0)`.mapWith(Number) })
    .from(decoders)
    .where(eq(decoders.participantId, participant.id))

  const [session] = await db
    .insert(sessions)
    .values({ labId, participantId: participant.id, operatorId: operator?.id ?? null, protocolId: protocol.id, montageId: montage.id, status: 'ended', startedAt, endedAt: new Date(startedAt.getTime() + 40 * 60_000), createdAt: startedAt })
    .returning()
  const positions = montage.channels
  const decoder = trainDecoder(calibration, { method: 'csp', classes: protocol.classes, positions, trainedAt: startedAt.toISOString() })
  const other = trainDecoder(calibration, { method: 'car', classes: protocol.classes, positions, trainedAt: startedAt.toISOString() })
  const [calRun] = await db
    .insert(runs)
    .values({ sessionId: session.id, kind: 'calibration', index: 1, status: 'completed', rateHz: SEED_RATE_HZ, channels: channelNames, startedAt, endedAt: new Date(startedAt.getTime() + 8 * 60_000), sampleCount: calibration.data[0].length })
    .returning()
  await storeRecording(db, calRun.id, calibration)
  await db.insert(trials).values(calibration.cues.map((c, i) => ({ runId: calRun.id, index: i, label: c.label, cueSample: c.sample, endSample: c.sample + 4 * SEED_RATE_HZ, outcome: 'recorded' as const })))

  const [dec] = await db
    .insert(decoders)
    .values({ labId, participantId: participant.id, sessionId: session.id, version: maxVersion + 1, method: 'csp', trainedOnRunIds: [calRun.id], model: decoder as unknown as Record<string, unknown>, cvAccuracy: decoder.cv.accuracy, cvKappa: decoder.cv.kappa, createdBy: operator?.id ?? null })
    .returning()
  const [dec2] = await db
    .insert(decoders)
    .values({ labId, participantId: participant.id, sessionId: session.id, version: maxVersion + 2, method: 'car', trainedOnRunIds: [calRun.id], model: other as unknown as Record<string, unknown>, cvAccuracy: other.cv.accuracy, cvKappa: other.cv.kappa, createdBy: operator?.id ?? null })
    .returning()
  await db.update(sessions).set({ activeDecoderId: dec.id }).where(eq(sessions.id, session.id))

  const fbStart = new Date(startedAt.getTime() + 15 * 60_000)
  const [fbRun] = await db
    .insert(runs)
    .values({ sessionId: session.id, kind: 'feedback', index: 2, status: 'completed', decoderId: dec.id, rateHz: SEED_RATE_HZ, channels: channelNames, startedAt: fbStart, endedAt: new Date(fbStart.getTime() + 8 * 60_000), sampleCount: feedback.data[0].length })
    .returning()
  await storeRecording(db, fbRun.id, feedback)

  // The decision log: one decision per 16-sample block once the window is full; a decision
  // counts for the trial whose imagery phase (cue onset + 4 s) holds its last sample.
  const online = createOnlineDecoder(decoder)
  const n = feedback.data[0].length
  const cues = feedback.cues
  const imagery = 4 * SEED_RATE_HZ
  const tallies = cues.map(() => emptyTally(protocol.classes.length))
  const rows: (typeof decisions.$inferInsert)[] = []
  for (let s = 0; s < n; s += SEED_BLOCK_SAMPLES) {
    const to = Math.min(n, s + SEED_BLOCK_SAMPLES)
    const block = new Float32Array(interleave(feedback, s, to).buffer)
    const out = online.push(block, to - s)
    if (!out.ready) continue
    const last = to - 1
    const trial = cues.findIndex((c) => last >= c.sample && last < c.sample + imagery)
    if (trial >= 0) addVote(tallies[trial], out.classIndex)
    rows.push({
      sessionId: session.id,
      runId: fbRun.id,
      trialIndex: trial >= 0 ? trial : null,
      sample: last,
      receivedAt: new Date(fbStart.getTime() + Math.round((last / SEED_RATE_HZ) * 1000)),
      output: out.output,
      probability: out.probability,
      decidedClass: out.className,
      cue: trial >= 0 ? cues[trial].label : null,
      // Invented latencies for the histogram: 0.6-2.4 ms.
      latencyUs: 600 + ((last * 7919) % 1800),
    })
  }
  for (let i = 0; i < rows.length; i += 500) await db.insert(decisions).values(rows.slice(i, i + 500))
  await db.insert(trials).values(
    cues.map((c, i) => {
      const scored = scoreTrial(tallies[i], protocol.classes.indexOf(c.label), 0.5)
      return { runId: fbRun.id, index: i, label: c.label, cueSample: c.sample, endSample: c.sample + imagery, outcome: scored.outcome, decidedClass: scored.decidedIndex === null ? null : protocol.classes[scored.decidedIndex] }
    }),
  )
  await db.insert(sessionEvents).values([
    { sessionId: session.id, runId: fbRun.id, kind: 'device.connected', sample: 0, at: fbStart, detail: { device: 'simulator' } },
    { sessionId: session.id, runId: fbRun.id, kind: 'sequence.gap', sample: 12000, at: new Date(fbStart.getTime() + 48_000), detail: { missingBlocks: 1 } },
  ])
  return { sessionId: session.id, participantId: participant.id, calibrationRunId: calRun.id, feedbackRunId: fbRun.id, decoderId: dec.id, otherDecoderId: dec2.id, decoder }
}
