// One live session on this server: its device link, its pipeline in a decoding worker, the run
// in progress, the active decoder and its two SSE hubs. The main thread only routes: blocks go
// to the worker, results come back, are published and queued for the decision log; nothing here
// awaits the database on the block path.
import { and, eq, max } from 'drizzle-orm'
import type { Database } from '../db/client.server.ts'
import { runs, sessions } from '../db/schema.ts'
import type { Decoder } from '../engine/decoder.ts'
import type { ServerMessage } from '../ingest/protocol.ts'
import type { LiveWriter } from './decision-log.server.ts'
import type {
  CueInfo,
  DecoderInfo,
  DeviceInfo,
  FeedbackSnapshot,
  LiveFigures,
  LiveSnapshot,
  RunInfo,
  RunKind,
  TrialEvent,
} from './events.ts'
import type { LiveLimits } from './limits.ts'
import type { FromWorker, PipelineSettings, ResultMessage } from './pipeline-messages.ts'
import type { PipelineListener, PipelinePool } from './pipeline-pool.server.ts'
import { RunState, type AdvanceResult, type CompletedTrial, type PhaseChange } from './run-state.ts'
import { buildSchedule, type ProtocolTiming } from './schedule.ts'
import { SseHub } from './sse-hub.server.ts'
import { addVote, emptyTally, scoreTrial, type TrialTally } from './trial-scoring.ts'

/** What the session needs from a device link (implemented by the ingest connection). */
export interface LinkHandle {
  readonly id: string
  /** The device token this link authenticated with. */
  readonly tokenId: string | null
  readonly device: string
  readonly channels: string[]
  readonly rateHz: number
  readonly connectedAt: Date
  lastFrameAt: number
  send(message: ServerMessage): void
  close(code: number, reason: string): void
  /** Continue the sample clock from here (set when the link joins a run in progress). */
  resumeFrom(sample: number): void
}

export interface SessionSetup {
  id: string
  labId: string
  participantId: string
  status: string
  lockedAt: Date | null
  montage: string[]
  timing: ProtocolTiming
  band: [number, number]
  decoder: { info: DecoderInfo; model: Decoder } | null
  /** Rate of earlier runs of this session, if any: later device links must match it. */
  rateHz: number | null
}

export interface StartRunOptions {
  kind: RunKind
  trialsPerClass?: number
  decisionEveryMs?: number
  smoothing?: number
  /** Share of decisions the winning class needs in a feedback trial, else timeout. */
  minShare?: number
  seed?: number
}

/** A refused live action; `status` is the HTTP status the route answers with. */
export class LiveError extends Error {
  override name = 'LiveError'
  constructor(
    message: string,
    readonly status = 409,
  ) {
    super(message)
  }
}

interface BlockMeta {
  seq: number
  runId: string | null
  trial: number | null
  cue: string | null
  imagery: boolean
  firstSample: number
  sampleCount: number
  /** Trials whose imagery ended in this block: scored once this block's result is back. */
  closes: CompletedTrial[]
}

interface Context {
  db: Database
  writer: LiveWriter
  pool: PipelinePool
  limits: LiveLimits
  log: (level: 'info' | 'warn' | 'error', event: string, fields: Record<string, unknown>) => void
  onRunEnded?: (runId: string, status: 'stopped' | 'completed' | 'interrupted') => void
}

const LATENCY_WINDOW = 2048

export class LiveSession {
  readonly operatorHub: SseHub
  readonly feedbackHub: SseHub
  link: LinkHandle | null = null
  run: RunState | null = null
  private runSettings: PipelineSettings & { minShare: number } = { decisionEveryMs: 0, smoothing: 0, minShare: 0.5 }
  private tally: TrialTally | null = null
  /** Set once the run's first block has reset the decoder. */
  private runDecoderStarted = false
  private tallyTrial: number | null = null
  private meta: BlockMeta[] = []
  private lastReason: string | null = null
  private lastCue: CueInfo | null = null
  private pipelineKey: string | null = null
  /** Device-clock end of the blocks the worker has processed (and whose decisions are queued). */
  private processedSeq = -1
  private processedSample = 0
  private ackedSeq = -1
  private latencies = new Uint32Array(LATENCY_WINDOW)
  private latencyCount = 0
  private removeFlushHook: () => void
  private chain: Promise<unknown> = Promise.resolve()
  readonly counts = { blocksReceived: 0, sequenceGaps: 0, duplicates: 0, reordered: 0, decisionsMade: 0 }
  /** Decisions of this session known to be committed. */
  decisionsLogged = 0

  constructor(
    private readonly ctx: Context,
    readonly setup: SessionSetup,
  ) {
    this.operatorHub = new SseHub({ ringSize: ctx.limits.sseRingSize, ringBytes: ctx.limits.sseRingBytes, clientQueue: ctx.limits.sseClientQueue })
    this.feedbackHub = new SseHub({ ringSize: Math.min(1024, ctx.limits.sseRingSize), ringBytes: ctx.limits.sseRingBytes / 4, clientQueue: ctx.limits.sseClientQueue })
    this.removeFlushHook = ctx.writer.onBeforeFlush(() => this.registerAck())
  }

  get id(): string {
    return this.setup.id
  }

  /** Last time this session had a device link, a run in progress or a viewer (epoch ms). */
  lastBusyAt = Date.now()

  /** True when nothing uses the session: it can be unloaded (its state is all in the database). */
  isIdle(now: number, idleMs: number): boolean {
    const busy = this.link !== null || this.run?.active === true || this.operatorHub.clientCount > 0 || this.feedbackHub.clientCount > 0
    if (busy) this.lastBusyAt = now
    return !busy && now - this.lastBusyAt > idleMs
  }

  // ---- device link ----------------------------------------------------------------------

  /** Checks a hello against the session; returns a refusal reason or null. */
  checkHello(channels: string[], rateHz: number): string | null {
    const montage = this.setup.montage
    if (channels.length !== montage.length) return `hello declares ${channels.length} channels; the session's montage has ${montage.length}`
    const at = channels.findIndex((c, i) => c !== montage[i])
    if (at >= 0) return `channel ${at + 1} is ${channels[at]}; the montage expects ${montage[at]} (same names, same order)`
    const expected = this.run?.active ? this.link?.rateHz ?? this.setup.rateHz : this.setup.decoder?.model.rateHz ?? this.setup.rateHz
    if (expected !== null && expected !== undefined && expected !== rateHz) return `rate ${rateHz} Hz differs from this session's ${expected} Hz`
    return null
  }

  attachLink(link: LinkHandle): { runId: string | null; nextSample: number } {
    this.link = link
    this.setup.rateHz = link.rateHz
    const key = `${link.channels.join(',')}@${link.rateHz}`
    if (!this.ctx.pool.has(this.id) || this.pipelineKey !== key) this.openPipeline()
    let nextSample = 0
    if (this.run?.active) {
      // Everything received so far is queued for the log, so the device continues after it.
      nextSample = this.expectedNext
      link.resumeFrom(nextSample)
    }
    this.lastReason = null
    this.publishDevice()
    this.event('device_connected', null, { device: link.device, channels: link.channels.length, rateHz: link.rateHz, resumedRun: this.run?.active ? this.run.id : null })
    return { runId: this.run?.active ? this.run.id : null, nextSample }
  }

  detachLink(link: LinkHandle, reason: string): void {
    if (this.link !== link) return
    this.link = null
    this.lastReason = reason
    this.publishDevice()
    this.event('device_disconnected', null, { device: link.device, reason })
  }

  private openPipeline(): void {
    const link = this.link
    if (!link) return
    this.pipelineKey = `${link.channels.join(',')}@${link.rateHz}`
    let decoder = this.setup.decoder?.model ?? null
    if (decoder && (decoder.rateHz !== link.rateHz || decoder.channels.join(',') !== link.channels.join(','))) decoder = null
    this.pipelineListener = {
      onResult: (m) => this.onResult(m),
      onDisplay: (m) => this.onDisplay(m),
      onError: (message) => {
        this.ctx.log('warn', 'live.pipeline-error', { sessionId: this.id, message })
        this.event('pipeline_error', null, { message })
      },
      onWorkerLost: () => {
        this.event('pipeline_lost', null, {})
        for (const m of this.meta) this.finishTrials(m.closes)
        this.meta = []
        this.pipelineKey = null
        this.link?.close(4503, 'decoding worker restarted; reconnect')
      },
    }
    this.ctx.pool.open(
      this.id,
      { channels: link.channels, rateHz: link.rateHz, displayBand: this.setup.band, displayRateHz: this.ctx.limits.displayRateHz, decoder, settings: this.runSettings },
      this.pipelineListener,
    )
  }

  private pipelineListener: PipelineListener | undefined

  /** A block accepted by the ingest checks (device clock). `samples` is kept for the recording. */
  onBlock(link: LinkHandle, seq: number, firstSample: number, samples: Float32Array, sampleCount: number, receivedAt: number): void {
    if (this.link !== link) return
    this.counts.blocksReceived++
    const end = firstSample + sampleCount
    this.expectedNext = end
    const run = this.run
    let meta: BlockMeta = { seq, runId: null, trial: null, cue: null, imagery: false, firstSample, sampleCount, closes: [] }
    if (run?.active) {
      this.ctx.writer.samples(run.id, link.channels.length, firstSample - run.startSample, samples)
      const step = run.advance(end, Date.now())
      const now = run.inForce()
      meta = { seq, runId: run.id, trial: now.trial, cue: now.cue, imagery: now.phase === 'imagery', firstSample, sampleCount, closes: step.completed }
      this.applyAdvance(run, step)
    }
    this.meta.push(meta)
    const decide = !!run && run.status === 'running' && this.setup.decoder !== null
    // The run's decisions depend on the run's own samples only, so its recording replays exactly.
    const reset = !!run?.active && !this.runDecoderStarted
    if (reset) this.runDecoderStarted = true
    this.ctx.pool.block(this.id, seq, firstSample, samples, sampleCount, receivedAt, decide, reset)
  }

  /** A late block that fills a gap: recorded, not decoded (the causal filters have moved on). */
  onLateBlock(link: LinkHandle, firstSample: number, samples: Float32Array): void {
    if (this.link !== link || !this.run?.active || firstSample < this.run.startSample) return
    this.ctx.writer.samples(this.run.id, link.channels.length, firstSample - this.run.startSample, samples)
  }

  onMarker(sample: number, label: string): void {
    this.event('marker', sample, { label })
  }

  private onResult(m: ResultMessage): void {
    const meta = this.meta.shift()
    if (!meta || meta.seq !== m.seq) {
      // Out of step only if the pipeline was reopened mid-flight; drop the stale queue.
      this.meta = []
      return
    }
    this.processedSeq = m.seq
    this.processedSample = m.lastSample + 1
    const d = m.decision
    if (d && meta.runId) {
      const run = this.run
      const runStart = run && run.id === meta.runId ? run.startSample : 0
      const decisionEvent = {
        runId: meta.runId,
        sample: m.lastSample,
        output: d.output,
        control: d.control,
        probability: d.probability,
        classIndex: d.classIndex,
        className: d.className,
        trial: meta.trial,
        cue: meta.cue,
        latencyMs: 0,
      }
      // Publish first, then take the time: the latency covers block arrival to SSE written.
      this.operatorHub.publish('decision', decisionEvent, true)
      this.feedbackHub.publish('feedback', { runId: meta.runId, trial: meta.trial, control: d.control, className: d.className, probability: d.probability }, true)
      const latencyUs = Math.max(0, Math.round((performance.now() - m.receivedAt) * 1000))
      decisionEvent.latencyMs = latencyUs / 1000
      this.latencies[this.latencyCount++ % LATENCY_WINDOW] = latencyUs
      this.counts.decisionsMade++
      this.ctx.writer.decision({
        sessionId: this.id,
        runId: meta.runId,
        trialIndex: meta.trial,
        sample: m.lastSample - runStart,
        receivedAtMs: performance.timeOrigin + m.receivedAt,
        output: d.output,
        probability: d.probability,
        decidedClass: d.className,
        cue: meta.cue,
        latencyUs,
      })
      if (meta.imagery && meta.trial !== null) {
        if (this.tallyTrial !== meta.trial || !this.tally) {
          this.tally = emptyTally(this.setup.decoder?.info.classes.length ?? this.setup.timing.classes.length)
          this.tallyTrial = meta.trial
        }
        addVote(this.tally, d.classIndex)
      }
    }
    if (meta.closes.length > 0) this.finishTrials(meta.closes)
  }

  private onDisplay(m: Extract<FromWorker, { t: 'display' }>): void {
    if (m.signalJson) this.operatorHub.publishJson('signal', m.signalJson, true)
    if (m.bandPower) this.operatorHub.publish('bandpower', m.bandPower, true)
    if (m.quality) {
      const channels = this.setup.montage.map((name, i) => {
        const rmsUv = m.quality!.rmsUv[i] ?? 0
        // Common practice for scalp EEG: below ~0.5 µV RMS a channel is flat (disconnected or
        // bridged); above ~100 µV RMS it is dominated by artefact or a loose electrode.
        const state = rmsUv < 0.5 ? 'flat' : rmsUv > 100 ? 'noisy' : 'good'
        return { name, rmsUv, state } as const
      })
      this.operatorHub.publish('quality', { channels }, true)
    }
  }

  private registerAck(): void {
    const made = this.counts.decisionsMade
    if (made > this.decisionsLogged) this.ctx.writer.afterCommit(() => (this.decisionsLogged = Math.max(this.decisionsLogged, made)))
    const link = this.link
    const run = this.run
    if (!link || !run?.active || this.processedSeq <= this.ackedSeq) return
    const seq = this.processedSeq
    const sample = this.processedSample
    this.ctx.writer.afterCommit(() => {
      this.ackedSeq = Math.max(this.ackedSeq, seq)
      if (this.link === link) link.send({ type: 'ack', durableSeq: seq, durableSample: sample })
    })
  }

  // ---- runs -------------------------------------------------------------------------------

  private applyAdvance(run: RunState, step: AdvanceResult): void {
    for (const change of step.changes) this.publishCue(run, change)
    if (step.finished) void this.serial(() => this.finishRun('completed', 'all trials done'))
  }

  private publishCue(run: RunState, change: PhaseChange): void {
    const cue: CueInfo = {
      runId: run.id,
      trial: change.trial.index,
      label: change.trial.label,
      phase: change.phase,
      atSample: change.atSample,
      durationMs: Math.round((change.lengthSamples / (this.link?.rateHz ?? this.setup.rateHz ?? 1)) * 1000),
    }
    this.lastCue = cue
    this.operatorHub.publish('cue', cue)
    this.feedbackHub.publish('cue', cue)
    this.link?.send({ type: 'cue', runId: run.id, trial: cue.trial, label: cue.label, phase: cue.phase, atSample: cue.atSample })
  }

  private finishTrials(trials: CompletedTrial[]): void {
    const run = this.run
    if (!run) return
    for (const t of trials) {
      let outcome: TrialEvent['outcome'] = 'recorded'
      let decidedClass: string | null = null
      if (run.kind === 'feedback') {
        const classes = this.setup.decoder?.info.classes ?? this.setup.timing.classes
        const tally = this.tallyTrial === t.trial.index && this.tally ? this.tally : emptyTally(classes.length)
        const scored = scoreTrial(tally, classes.indexOf(t.trial.label), this.runSettings.minShare)
        outcome = scored.outcome
        decidedClass = scored.decidedIndex === null ? null : classes[scored.decidedIndex]
        if (outcome === 'hit') run.hits++
        else if (outcome === 'miss') run.misses++
        else run.timeouts++
      }
      this.tally = null
      this.tallyTrial = null
      this.ctx.writer.trial({
        runId: run.id,
        index: t.trial.index,
        label: t.trial.label,
        cueSample: t.cueSample - run.startSample,
        cueAtMs: t.cueAtMs,
        endSample: t.endSample - run.startSample,
        outcome,
        decidedClass,
      })
      const event: TrialEvent = { runId: run.id, index: t.trial.index, label: t.trial.label, outcome, decidedClass }
      this.operatorHub.publish('trial', event)
      this.feedbackHub.publish('trial', event)
    }
    this.publishRun()
  }

  /** Operator actions and automatic run ends run one at a time, in order. */
  serial<T>(fn: () => Promise<T>): Promise<T> {
    const next = this.chain.then(fn, fn)
    this.chain = next.catch(() => undefined)
    return next
  }

  startRun(options: StartRunOptions, userId: string | null): Promise<RunInfo> {
    return this.serial(async () => {
      if (this.setup.status === 'ended' || this.setup.lockedAt) throw new LiveError('this session has ended')
      if (this.run?.active) throw new LiveError(`run ${this.run.index} is still ${this.run.status}; stop it first`)
      const link = this.link
      if (!link) throw new LiveError('no device is connected; connect the amplifier bridge or the simulator first')
      if (options.kind === 'feedback' && !this.setup.decoder) throw new LiveError('a feedback run needs an active decoder; train one and activate it')
      const decoder = options.kind === 'feedback' || this.setup.decoder ? this.setup.decoder : null
      const trialsPerClass = options.trialsPerClass ?? this.setup.timing.trialsPerClass
      const seed = options.seed ?? Math.floor(Math.random() * 2 ** 31)
      const schedule = buildSchedule({ ...this.setup.timing, trialsPerClass }, link.rateHz, seed)
      this.runSettings = {
        decisionEveryMs: clamp(options.decisionEveryMs ?? 0, 0, 10_000),
        smoothing: clamp(options.smoothing ?? 0, 0, 0.99),
        minShare: clamp(options.minShare ?? 0.5, 0, 1),
      }
      this.ctx.pool.setSettings(this.id, this.runSettings)
      const db = this.ctx.db
      const [{ last }] = await db.select({ last: max(runs.index) }).from(runs).where(eq(runs.sessionId, this.id))
      const startedAt = new Date()
      const [row] = await db
        .insert(runs)
        .values({
          sessionId: this.id,
          kind: options.kind,
          index: (last ?? 0) + 1,
          status: 'running',
          decoderId: decoder?.info.id ?? null,
          source: 'live',
          rateHz: link.rateHz,
          channels: link.channels,
          startedAt,
          stats: { settings: { ...this.runSettings, trialsPerClass, seed }, startedBy: userId },
        })
        .returning()
      if (this.setup.status === 'planned') {
        await db.update(sessions).set({ status: 'live', startedAt }).where(and(eq(sessions.id, this.id), eq(sessions.status, 'planned')))
        this.setup.status = 'live'
      }
      this.run = new RunState(row.id, options.kind, row.index, row.decoderId, schedule, this.processedSampleOrNext(), startedAt)
      this.runDecoderStarted = false
      this.tally = null
      this.event('run_started', 0, { kind: options.kind, index: row.index, trials: schedule.length, seed })
      this.publishRun()
      link.send({ type: 'run', runId: row.id, kind: options.kind, state: 'running' })
      return this.runInfo()!
    })
  }

  /** The device-clock sample the run starts at: the next sample the device will send. */
  private processedSampleOrNext(): number {
    return Math.max(this.processedSample, this.expectedNext)
  }

  /** Set by the ingest on every accepted block: the first sample of the next block. */
  expectedNext = 0

  pauseRun(): Promise<RunInfo> {
    return this.serial(async () => {
      const run = this.requireRun()
      try {
        run.pause()
      } catch (error) {
        throw new LiveError((error as Error).message)
      }
      await this.ctx.db.update(runs).set({ status: 'paused' }).where(eq(runs.id, run.id))
      this.event('run_paused', this.expectedNext - run.startSample, {})
      this.lastCue = null
      this.publishRun()
      this.link?.send({ type: 'run', runId: run.id, kind: run.kind, state: 'paused' })
      return this.runInfo()!
    })
  }

  resumeRun(): Promise<RunInfo> {
    return this.serial(async () => {
      const run = this.requireRun()
      try {
        run.resume(this.expectedNext)
      } catch (error) {
        throw new LiveError((error as Error).message)
      }
      await this.ctx.db.update(runs).set({ status: 'running' }).where(eq(runs.id, run.id))
      this.event('run_resumed', this.expectedNext - run.startSample, {})
      this.publishRun()
      this.link?.send({ type: 'run', runId: run.id, kind: run.kind, state: 'running' })
      return this.runInfo()!
    })
  }

  stopRun(reason = 'stopped by the operator'): Promise<RunInfo> {
    return this.serial(async () => {
      this.requireRun()
      return this.finishRun('stopped', reason)
    })
  }

  private requireRun(): RunState {
    if (!this.run?.active) throw new LiveError('no run is in progress')
    return this.run
  }

  /** Ends the run: flushes every sample and decision it has, then writes its final status. */
  async finishRun(status: 'stopped' | 'completed' | 'interrupted', reason: string): Promise<RunInfo> {
    const run = this.run
    if (!run || !run.active) return this.runInfo()!
    run.end(status)
    // Results still in the worker belong to this run; let them land before the final flush.
    await this.waitForPipeline(500)
    await this.ctx.writer.flush()
    const endedAt = run.endedAt ?? new Date()
    const latency = this.latencyPercentiles()
    await this.ctx.db
      .update(runs)
      .set({
        status,
        endedAt,
        stats: {
          settings: this.runSettings,
          reason,
          trialsDone: run.trialsDone,
          trialsTotal: run.trialsTotal,
          hits: run.hits,
          misses: run.misses,
          timeouts: run.timeouts,
          abortedTrials: run.aborted,
          latencyP50Ms: latency.p50,
          latencyP99Ms: latency.p99,
          sequenceGaps: this.counts.sequenceGaps,
          duplicates: this.counts.duplicates,
          reordered: this.counts.reordered,
        },
      })
      .where(eq(runs.id, run.id))
    this.event(`run_${status}`, this.processedSample - run.startSample, { reason }, run.id)
    const end: CueInfo = { runId: run.id, trial: run.trialsDone, label: '', phase: 'rest', atSample: this.processedSample, durationMs: 0 }
    this.lastCue = null
    this.link?.send({ type: 'cue', runId: run.id, trial: end.trial, label: '', phase: 'end', atSample: this.processedSample })
    this.link?.send({ type: 'run', runId: run.id, kind: run.kind, state: status })
    this.publishRun()
    await this.ctx.writer.flush()
    this.ctx.onRunEnded?.(run.id, status)
    return this.runInfo()!
  }

  private async waitForPipeline(timeoutMs: number): Promise<void> {
    const until = Date.now() + timeoutMs
    while (this.meta.length > 0 && Date.now() < until && this.ctx.pool.has(this.id)) await new Promise((r) => setTimeout(r, 5))
  }

  /** Ends the session: stops the run, closes the device link, no new links or runs. */
  endSession(): Promise<void> {
    return this.serial(async () => {
      if (this.run?.active) await this.finishRun('stopped', 'session ended')
      await this.ctx.db.update(sessions).set({ status: 'ended', endedAt: new Date() }).where(eq(sessions.id, this.id))
      this.setup.status = 'ended'
      this.event('session_ended', null, {})
      this.link?.close(1000, 'session ended')
      this.publishDevice()
    })
  }

  // ---- decoder ----------------------------------------------------------------------------

  setDecoder(decoder: { info: DecoderInfo; model: Decoder } | null): void {
    if (this.run?.active && this.run.kind === 'feedback') throw new LiveError('a feedback run is in progress; stop it before changing the decoder')
    this.setup.decoder = decoder
    const link = this.link
    if (link && decoder && (decoder.model.rateHz !== link.rateHz || decoder.model.channels.join(',') !== link.channels.join(','))) {
      throw new LiveError('this decoder was trained on other channels or another rate than the connected device')
    }
    this.ctx.pool.setDecoder(this.id, decoder?.model ?? null)
    this.operatorHub.publish('decoder', decoder?.info ?? null)
    this.event('decoder_activated', null, { decoderId: decoder?.info.id ?? null })
  }

  // ---- shutdown ---------------------------------------------------------------------------

  async shutdown(code: number, reason: string): Promise<void> {
    await this.serial(async () => {
      if (this.run?.active) await this.finishRun('interrupted', reason)
    })
    this.link?.close(code, reason)
    if (this.pipelineListener) this.ctx.pool.close(this.id, this.pipelineListener)
    this.operatorHub.closeAll()
    this.feedbackHub.closeAll()
    this.removeFlushHook()
  }

  // ---- views ------------------------------------------------------------------------------

  /** Records a session event (in the run in progress unless `runId` is given) and shows it on the console. */
  event(kind: string, sample: number | null, detail: Record<string, unknown>, runId: string | null = this.run?.active ? this.run.id : null): void {
    const atMs = Date.now()
    this.ctx.writer.event({ sessionId: this.id, runId, kind, sample, detail, atMs })
    this.operatorHub.publish('event', { kind, at: new Date(atMs).toISOString(), sample, detail })
  }

  private publishDevice(): void {
    this.operatorHub.publish('device', this.deviceInfo())
  }

  private publishRun(): void {
    const info = this.runInfo()
    if (!info) return
    this.operatorHub.publish('run', info)
    this.feedbackHub.publish('run', info)
  }

  deviceInfo(): DeviceInfo {
    const link = this.link
    if (link) return { state: 'connected', device: link.device, channels: link.channels, rateHz: link.rateHz, connectedAt: link.connectedAt.toISOString(), reason: null }
    return { state: this.run?.active ? 'lost' : 'none', device: null, channels: this.setup.montage, rateHz: this.setup.rateHz, connectedAt: null, reason: this.lastReason }
  }

  runInfo(): RunInfo | null {
    const run = this.run
    if (!run) return null
    return {
      id: run.id,
      kind: run.kind,
      index: run.index,
      status: run.status,
      trialsDone: run.trialsDone,
      trialsTotal: run.trialsTotal,
      hits: run.hits,
      misses: run.misses,
      timeouts: run.timeouts,
      startedAt: run.startedAt.toISOString(),
      endedAt: run.endedAt?.toISOString() ?? null,
      decoderId: run.decoderId,
    }
  }

  latencyPercentiles(): { p50: number | null; p99: number | null } {
    const n = Math.min(this.latencyCount, LATENCY_WINDOW)
    if (n === 0) return { p50: null, p99: null }
    const sorted = this.latencies.slice(0, n).sort()
    const at = (q: number) => sorted[Math.min(n - 1, Math.floor(q * n))] / 1000
    return { p50: at(0.5), p99: at(0.99) }
  }

  figures(): LiveFigures {
    const decisionsLogged = this.decisionsLogged
    const run = this.run
    const scored = run ? run.hits + run.misses + run.timeouts : 0
    const latency = this.latencyPercentiles()
    return {
      trialsDone: run?.trialsDone ?? 0,
      trialsTotal: run?.trialsTotal ?? 0,
      accuracy: run && run.kind === 'feedback' && scored > 0 ? run.hits / scored : null,
      latencyP50Ms: latency.p50,
      latencyP99Ms: latency.p99,
      blocksReceived: this.counts.blocksReceived,
      sequenceGaps: this.counts.sequenceGaps,
      duplicates: this.counts.duplicates,
      reordered: this.counts.reordered,
      decisionsMade: this.counts.decisionsMade,
      decisionsLogged,
    }
  }

  snapshot(): LiveSnapshot {
    return {
      sessionId: this.id,
      sessionStatus: this.setup.status,
      device: this.deviceInfo(),
      run: this.runInfo(),
      cue: this.run?.active ? this.lastCue : null,
      decoder: this.setup.decoder?.info ?? null,
      figures: this.figures(),
      classes: this.setup.timing.classes,
      montage: this.setup.montage,
    }
  }

  feedbackSnapshot(): FeedbackSnapshot {
    return { sessionId: this.id, run: this.runInfo(), cue: this.run?.active ? this.lastCue : null, classes: this.setup.timing.classes }
  }
}

function clamp(v: number, lo: number, hi: number): number {
  return Number.isFinite(v) ? Math.min(hi, Math.max(lo, v)) : lo
}
