// Replay reproduces the live decision log exactly with the live decoder, and gives a
// comparison with another decoder of the same participant.
import { eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { decisions, decoders, participants, recordingChunks } from '~/db/schema'
import { SessionPipeline } from '~/live/session-pipeline'
import { chunkSamples } from '~/server/review.server'
import { channelOrder, replayRun } from '~/server/replay.server'
import { createTestServices, type TestServices } from '../support/services'
import { seedReviewSession, type SeededSession } from '../fixtures/review/seed'

let t: TestServices
let seeded: SeededSession

beforeAll(async () => {
  t = await createTestServices()
  seeded = await seedReviewSession(t.handle.db, t.labId, { trialsPerClass: 10 })
})

afterAll(async () => {
  await t?.close()
})

describe('replay', () => {
  it('reproduces the live decision log number for number with the live decoder', async () => {
    const r = await replayRun(t.handle.db, t.labId, seeded.feedbackRunId, seeded.decoderId)
    expect(r.sameDecoder).toBe(true)
    expect(r.alignment).toBe('live-decisions')
    expect(r.live.length).toBeGreaterThan(1000)
    expect(r.replay.length).toBe(r.live.length)
    expect(r.comparison.identical).toBe(r.live.length)
    expect(r.comparison.maxOutputDifference).toBe(0)
    expect(r.comparison.firstDifference).toBeNull()
    // Same log, so the same trial outcomes.
    for (const trial of r.trials) expect(trial.replay).toEqual(trial.live)
    expect(r.metrics.replay).toEqual(r.metrics.live)
  })

  it('replays with another decoder of the participant and sets the outcomes side by side', async () => {
    const r = await replayRun(t.handle.db, t.labId, seeded.feedbackRunId, seeded.otherDecoderId)
    expect(r.sameDecoder).toBe(false)
    expect(r.replay.length).toBeGreaterThan(0)
    expect(r.comparison.identical).toBeLessThan(r.comparison.compared)
    expect(r.trials.length).toBe(20)
    expect(r.metrics.replay).not.toBeNull()
  })

  it('replays a calibration run (no live log) at the end of every stored chunk', async () => {
    const r = await replayRun(t.handle.db, t.labId, seeded.calibrationRunId, seeded.decoderId)
    expect(r.alignment).toBe('chunk-ends')
    expect(r.live.length).toBe(0)
    expect(r.replay.length).toBeGreaterThan(50)
    expect(r.metrics.live).toBeNull()
  })

  it('refuses a decoder of another participant with a clear message', async () => {
    const db = t.handle.db
    const [other] = await db.select().from(participants).where(eq(participants.code, 'HS-022'))
    const [source] = await db.select().from(decoders).where(eq(decoders.id, seeded.decoderId))
    const [foreign] = await db.insert(decoders).values({ ...source, id: undefined, participantId: other.id, version: 9 }).returning()
    await expect(replayRun(db, t.labId, seeded.feedbackRunId, foreign.id)).rejects.toThrow(/another participant/)
    await expect(replayRun(db, '00000000-0000-4000-8000-000000000000', seeded.feedbackRunId, seeded.decoderId)).rejects.toThrow(/No such run/)
  })

  it('reproduces a log made by the live pipeline (app/live/session-pipeline.ts), one decision per 100 ms', async () => {
    // The live loop's own decoding object, fed the stored samples in 16-sample blocks as a
    // device link would; its decisions replace the seeded log (run-relative sample = last sample used).
    const db = t.handle.db
    const chunks = await db.select().from(recordingChunks).where(eq(recordingChunks.runId, seeded.feedbackRunId)).orderBy(recordingChunks.firstSample)
    const pipeline = new SessionPipeline('replay-test', seeded.decoder.channels, seeded.decoder.rateHz, [1, 40], 50, { decisionEveryMs: 100, smoothing: 0.5 } as never)
    pipeline.setDecoder(seeded.decoder)
    const C = seeded.decoder.channels.length
    const rows: (typeof decisions.$inferInsert)[] = []
    for (const chunk of chunks) {
      const all = chunkSamples(chunk.data)
      for (let s = 0; s < chunk.sampleCount; s += 16) {
        const n = Math.min(16, chunk.sampleCount - s)
        const first = chunk.firstSample + s
        const d = pipeline.push(first, all.slice(s * C, (s + n) * C), n, true)
        if (d) rows.push({ sessionId: seeded.sessionId, runId: seeded.feedbackRunId, trialIndex: null, sample: first + n - 1, receivedAt: new Date(), output: d.output, probability: d.probability, decidedClass: d.className, cue: null, latencyUs: 0 })
      }
    }
    await db.delete(decisions).where(eq(decisions.runId, seeded.feedbackRunId))
    for (let i = 0; i < rows.length; i += 500) await db.insert(decisions).values(rows.slice(i, i + 500))
    const r = await replayRun(db, t.labId, seeded.feedbackRunId, seeded.decoderId)
    expect(rows.length).toBeGreaterThan(500)
    expect(r.comparison.compared).toBe(rows.length)
    expect(r.comparison.identical).toBe(rows.length)
  })

  it('maps channels by name when the run lists them in another order', () => {
    expect(channelOrder(['C3', 'Cz', 'C4'], ['C4', 'C3'])).toEqual([2, 0])
    expect(channelOrder(['C3', 'C4'], ['C3', 'C4'])).toBeNull()
    expect(() => channelOrder(['C3'], ['C3', 'C4'])).toThrow(/no C4/)
  })
})
