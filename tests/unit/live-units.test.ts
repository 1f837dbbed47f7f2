// The pure parts of the live path, rule by rule: cue schedules, sequence tracking, trial
// outcomes, rate checks, and the SSE fan-out with its bounded client queues and resume.
import { describe, expect, test } from 'vitest'
import { RateGuard } from '~/live/rate-guard'
import { RunState } from '~/live/run-state'
import { balancedOrder, buildSchedule, seededRandom } from '~/live/schedule'
import { SequenceTracker } from '~/live/sequence-tracker'
import { SseHub } from '~/live/sse-hub.server'
import { hubEventStream } from '~/live/sse-response.server'
import { addVote, emptyTally, scoreTrial } from '~/live/trial-scoring'
import { readEvents } from './live-support'

describe('cue schedule', () => {
  test('every class equally often, no more than three identical cues in a row, reproducible from the seed', () => {
    for (let seed = 1; seed < 50; seed++) {
      const order = balancedOrder(['left', 'right', 'feet'], 20, seededRandom(seed))
      expect(order.filter((c) => c === 'left')).toHaveLength(20)
      expect(order.filter((c) => c === 'feet')).toHaveLength(20)
      let run = 1
      for (let i = 1; i < order.length; i++) {
        run = order[i] === order[i - 1] ? run + 1 : 1
        expect(run).toBeLessThanOrEqual(3)
      }
      expect(balancedOrder(['left', 'right', 'feet'], 20, seededRandom(seed))).toEqual(order)
    }
  })

  test('phase lengths in samples; the rest is jittered within [rest, rest + jitter]', () => {
    const timing = { classes: ['left', 'right'], trialsPerClass: 30, fixationSeconds: 2, cueSeconds: 1.25, imagerySeconds: 4, restSeconds: 2, restJitterSeconds: 1 }
    const schedule = buildSchedule(timing, 500, 9)
    expect(schedule).toHaveLength(60)
    for (const t of schedule) {
      expect([t.fixation, t.cue, t.imagery]).toEqual([1000, 625, 2000])
      expect(t.rest).toBeGreaterThanOrEqual(1000)
      expect(t.rest).toBeLessThanOrEqual(1500)
    }
    expect(new Set(schedule.map((t) => t.rest)).size).toBeGreaterThan(10)
  })
})

describe('run state', () => {
  const trial = (index: number, label: string) => ({ index, label, fixation: 10, cue: 5, imagery: 20, rest: 8 })

  test('phases advance on the sample clock, exactly at their boundaries', () => {
    const run = new RunState('r', 'calibration', 1, null, [trial(0, 'left'), trial(1, 'right')], 100, new Date())
    const a = run.advance(113, 0)
    expect(a.changes.map((c) => [c.phase, c.atSample])).toEqual([['fixation', 100], ['cue', 110]])
    expect(run.inForce()).toEqual({ trial: 0, cue: 'left', phase: 'cue' })
    const b = run.advance(200, 0)
    expect(b.completed.map((c) => [c.trial.label, c.cueSample, c.endSample])).toEqual([['left', 110, 135], ['right', 153, 178]])
    expect(b.finished).toBe(true)
  })

  test('pause abandons the trial in progress and gives it again after resume', () => {
    const run = new RunState('r', 'feedback', 1, null, [trial(0, 'left'), trial(1, 'right')], 0, new Date())
    run.advance(20, 0)
    run.pause()
    expect(run.advance(500, 0).changes).toEqual([])
    run.resume(1000)
    const again = run.advance(1001, 0)
    expect(again.changes[0]).toMatchObject({ phase: 'fixation', atSample: 1000, trial: { index: 0, label: 'left' } })
    expect(run.aborted).toBe(1)
  })
})

describe('sequence tracker', () => {
  test('in order, gap, late block, duplicate, backwards', () => {
    const t = new SequenceTracker(null)
    expect(t.classify(0, 0, 16).kind).toBe('in-order')
    expect(t.classify(1, 16, 16).kind).toBe('in-order')
    expect(t.classify(3, 48, 16)).toMatchObject({ kind: 'gap', missingSeqs: 1, missingSamples: 16 })
    expect(t.classify(2, 32, 16).kind).toBe('reordered')
    expect(t.classify(2, 32, 16).kind).toBe('duplicate')
    expect(t.classify(4, 40, 16).kind).toBe('backwards')
  })

  test('after a reconnect, resent data is dropped and an overlapping block is trimmed', () => {
    const t = new SequenceTracker(100)
    expect(t.classify(0, 68, 16).kind).toBe('duplicate')
    expect(t.classify(1, 92, 16)).toMatchObject({ kind: 'in-order', trimFrom: 8 })
    expect(t.expectedSample).toBe(108)
    expect(t.classify(2, 100, 16).kind).toBe('backwards')
  })
})

describe('trial outcome', () => {
  test('majority of decisions during imagery; timeout when none or no clear winner', () => {
    const tally = emptyTally(2)
    for (const c of [1, 1, 1, 0]) addVote(tally, c)
    expect(scoreTrial(tally, 1, 0.6)).toEqual({ outcome: 'hit', decidedIndex: 1 })
    expect(scoreTrial(tally, 0, 0.6)).toEqual({ outcome: 'miss', decidedIndex: 1 })
    expect(scoreTrial(tally, 1, 0.8).outcome).toBe('timeout')
    expect(scoreTrial(emptyTally(2), 0, 0.6).outcome).toBe('timeout')
    const tie = emptyTally(2)
    addVote(tie, 0)
    addVote(tie, 1)
    expect(scoreTrial(tie, 0, 0).outcome).toBe('timeout')
  })
})

describe('rate guard', () => {
  const options = { rateHz: 500, maxFramesPerSecond: 100, frameBurst: 10, maxAheadSeconds: 2, slowWindowMs: 1000, slowFraction: 0.5 }

  test('a burst beyond the bucket is refused; the bucket refills with time', () => {
    const g = new RateGuard(options, 0)
    for (let i = 0; i < 10; i++) expect(g.frame(0).ok).toBe(true)
    expect(g.frame(0).ok).toBe(false)
    expect(g.frame(20).ok).toBe(true) // 20 ms at 100/s = 2 frames back
  })

  test('samples may run ahead of the clock by maxAheadSeconds only', () => {
    const g = new RateGuard(options, 0)
    expect(g.samplesArrived(1000, 0).ok).toBe(true)
    expect(g.samplesArrived(1, 0).ok).toBe(false)
  })

  test('two slow windows in a row: slow; one: a warning', () => {
    const g = new RateGuard(options, 0)
    g.samplesArrived(100, 500)
    expect(g.checkSlow(1000)).toMatchObject({ slow: false, warn: true })
    g.samplesArrived(100, 1500)
    expect(g.checkSlow(2000)).toMatchObject({ slow: true })
  })
})

describe('SSE fan-out', () => {
  test('Last-Event-ID resumes with exactly the missed events; unknown ids get a fresh snapshot', async () => {
    const hub = new SseHub({ ringSize: 100, clientQueue: 50 })
    for (let i = 0; i < 5; i++) hub.publish('cue', { i })
    const open = (lastEventId: string | null) => {
      const controller = new AbortController()
      const response = hubEventStream({ hub, signal: controller.signal, lastEventId, clientQueue: 50, snapshot: () => [{ event: 'snapshot', payload: { fresh: true } }] })
      return { response, controller }
    }
    const first = open(null)
    const events = readEvents(first.response, (ev) => ev.length >= 3, 2000)
    hub.publish('cue', { i: 5 })
    hub.publish('cue', { i: 6 })
    const got = await events
    first.controller.abort()
    expect(got.map((e) => e.event)).toEqual(['snapshot', 'cue', 'cue'])
    const lastId = got[2].id!
    hub.publish('cue', { i: 7 })
    hub.publish('cue', { i: 8 })
    const resumed = open(lastId)
    const again = await readEvents(resumed.response, (ev) => ev.length >= 2, 2000)
    resumed.controller.abort()
    expect(again.map((e) => e.data)).toEqual([{ i: 7 }, { i: 8 }])
    const stale = open('0-5')
    const fresh = await readEvents(stale.response, (ev) => ev.length >= 1, 2000)
    stale.controller.abort()
    expect(fresh[0]).toMatchObject({ event: 'snapshot', data: { fresh: true } })
  })

  test('a client that never reads: publishing stays fast, its queue stays bounded, it is told what it missed', async () => {
    const hub = new SseHub({ ringSize: 100, clientQueue: 20 })
    const controller = new AbortController()
    const response = hubEventStream({ hub, signal: controller.signal, lastEventId: null, clientQueue: 20, snapshot: () => [] })
    const reader = response.body!.getReader()
    await reader.read() // the retry line; from here the client reads nothing
    const started = performance.now()
    for (let i = 0; i < 20_000; i++) hub.publish('signal', { i, raw: [[1, 2, 3]] }, true)
    const ms = performance.now() - started
    expect(ms).toBeLessThan(2000)
    const heap = process.memoryUsage().heapUsed
    for (let i = 0; i < 20_000; i++) hub.publish('signal', { i, raw: [[1, 2, 3]] }, true)
    expect(process.memoryUsage().heapUsed - heap).toBeLessThan(50 * 2 ** 20)
    // Reading now yields the newest queued frames, headed by a lag event counting the dropped ones.
    const { value } = await reader.read()
    const text = new TextDecoder().decode(value)
    expect(text).toMatch(/event: lag\ndata: \{"dropped":\d+\}/)
    expect((text.match(/event: signal/g) ?? []).length).toBeLessThanOrEqual(21)
    controller.abort()
  })

  test('a slow client with only essential events queued is closed, to resume from the ring', async () => {
    const hub = new SseHub({ ringSize: 1000, clientQueue: 10 })
    const controller = new AbortController()
    const response = hubEventStream({ hub, signal: controller.signal, lastEventId: null, clientQueue: 10, snapshot: () => [] })
    const reader = response.body!.getReader()
    await reader.read()
    for (let i = 0; i < 30; i++) hub.publish('cue', { i })
    expect(hub.clientCount).toBe(0)
    controller.abort()
  })
})

describe('wire format worked example (docs/ingest-protocol.md)', () => {
  test('encodeBlock and decodeBlock agree byte for byte with Python struct (scripts/fixtures/ingest_block_example.py)', async () => {
    const { encodeBlock, decodeBlock } = await import('~/ingest/protocol')
    const example = (await import('../fixtures/live/ingest-block-example.json')).default
    const samples = Float32Array.from(example.samples.flat())
    const bytes = encodeBlock({ seq: example.seq, firstSample: example.firstSample, channelCount: example.channels.length, samples })
    expect(Buffer.from(bytes).toString('hex')).toBe(example.hex)
    const decoded = decodeBlock(new Uint8Array(Buffer.from(example.hex, 'hex')), 2)
    expect({ seq: decoded.seq, firstSample: decoded.firstSample, sampleCount: decoded.sampleCount }).toEqual({ seq: 7, firstSample: 1000, sampleCount: 2 })
    expect(Array.from(decoded.samples)).toEqual(example.samples.flat())
  })
})

describe('session pipeline (inside a decoding worker)', () => {
  test('decision rate: one per block, or at most one per N ms of signal; control is the smoothed tanh(score/2)', async () => {
    const { SessionPipeline } = await import('~/live/session-pipeline')
    const { createOnlineDecoder } = await import('~/engine/online')
    const { trainDecoder } = await import('~/engine/decoder')
    const { simulateImagery } = await import('~/engine/synthetic')
    const { recording } = simulateImagery({ rows: 2, cols: 2, rateHz: 500, trialsPerClass: 10, seed: 4 })
    const decoder = trainDecoder(recording, { method: 'car', windowSeconds: 0.2 })
    const C = recording.channels.length
    const block = (b: number) => {
      const out = new Float32Array(16 * C)
      for (let s = 0; s < 16; s++) for (let c = 0; c < C; c++) out[s * C + c] = recording.data[c][b * 16 + s]
      return out
    }
    const perBlock = new SessionPipeline('s', recording.channels, 500, [8, 30], 125, { decisionEveryMs: 0, smoothing: 0 })
    perBlock.setDecoder(decoder)
    const every100 = new SessionPipeline('s', recording.channels, 500, [8, 30], 125, { decisionEveryMs: 100, smoothing: 0 })
    every100.setDecoder(decoder)
    const smoothed = new SessionPipeline('s', recording.channels, 500, [8, 30], 125, { decisionEveryMs: 0, smoothing: 0.8 })
    smoothed.setDecoder(decoder)
    const reference = createOnlineDecoder(decoder)
    let a = 0
    let b = 0
    let control = 0
    for (let i = 0; i < 100; i++) {
      const samples = block(i)
      const ref = reference.push(samples, 16)
      const d1 = perBlock.push(i * 16, samples, 16, true)
      const d2 = every100.push(i * 16, samples, 16, true)
      const d3 = smoothed.push(i * 16, samples, 16, true)
      if (!ref.ready) {
        expect(d1).toBeNull()
        continue
      }
      a += d1 ? 1 : 0
      b += d2 ? 1 : 0
      expect(d1!.output).toBe(ref.output)
      expect(d1!.control).toBeCloseTo(Math.tanh(ref.output / 2), 12)
      // Exponential smoothing: y = a·y + (1 − a)·x with a = 0.8.
      control = 0.8 * control + 0.2 * Math.tanh(ref.output / 2)
      expect(d3!.control).toBeCloseTo(control, 12)
    }
    // 100 ms at 500 Hz = 50 samples: one decision per 4 blocks of 16 samples (64 samples).
    expect(a).toBe(100 - Math.ceil(decoder.windowSeconds * 500 / 16) + 1)
    expect(b).toBeGreaterThanOrEqual(Math.floor(a / 4))
    expect(b).toBeLessThanOrEqual(Math.ceil(a / 4) + 1)
  })
})
