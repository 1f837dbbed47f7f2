// Live services: created once by server.ts and reached by routes as context.services.live.
// Owns the ingest WebSocket server, the decoding workers, the decision log writer, the live
// sessions and their SSE streams, and training jobs.
import type { IncomingMessage } from 'node:http'
import type { Duplex } from 'node:stream'
import { and, eq, inArray, desc, isNotNull } from 'drizzle-orm'
import type { Database } from '../db/client.server.ts'
import { annotations, decoders, montages, protocols, runs, sessionEvents, sessions } from '../db/schema.ts'
import type { Decoder } from '../engine/decoder.ts'
import type { SpatialMethodName } from '../engine/spatial/types.ts'
import { CloseCode } from '../ingest/protocol.ts'
import type { Config } from '../server/config.server.ts'
import type { SessionUser } from '../server/services.ts'
import { LiveWriter } from './decision-log.server.ts'
import type { AnnotationEvent, DecoderInfo, LiveSnapshot, RunInfo, TrainingInfo } from './events.ts'
import { IngestServer } from './ingest.server.ts'
import { resolveLimits, type LiveLimits } from './limits.ts'
import { LiveError, LiveSession, type SessionSetup, type StartRunOptions } from './live-session.server.ts'
import { PipelinePool } from './pipeline-pool.server.ts'
import { hubEventStream } from './sse-response.server.ts'
import * as tokens from './tokens.server.ts'
import { TrainingError, TrainingJobs, trainableRuns } from './training.server.ts'

export { LiveError } from './live-session.server.ts'
export { TrainingError } from './training.server.ts'

type LogFn = (level: 'info' | 'warn' | 'error', event: string, fields: Record<string, unknown>) => void

export interface LiveDeps {
  db: Database
  config: Config
  limits?: Partial<LiveLimits>
  log?: LogFn
  /** Called once a run has ended and everything it logged is durable (e.g. the summary e-mail). */
  onRunEnded?: (runId: string, status: 'stopped' | 'completed' | 'interrupted') => void
}

function defaultLog(level: 'info' | 'warn' | 'error', event: string, fields: Record<string, unknown>) {
  const line = JSON.stringify({ time: new Date().toISOString(), level, event, ...fields })
  if (level === 'info') process.stdout.write(line + '\n')
  else process.stderr.write(line + '\n')
}

export type LiveServicesImpl = Awaited<ReturnType<typeof createLiveServices>>

export async function createLiveServices(deps: LiveDeps) {
  const { db } = deps
  const limits = resolveLimits(deps.limits)
  const log = deps.log ?? defaultLog
  let closing = false

  // A crash leaves runs marked as in progress: they are interrupted, and say so.
  const stale = await db
    .update(runs)
    .set({ status: 'interrupted', endedAt: new Date() })
    .where(inArray(runs.status, ['running', 'paused']))
    .returning({ id: runs.id, sessionId: runs.sessionId })
  if (stale.length > 0) {
    await db.insert(sessionEvents).values(stale.map((r) => ({ sessionId: r.sessionId, runId: r.id, kind: 'run_interrupted', detail: { reason: 'the server stopped without a clean shutdown' } })))
    log('warn', 'live.runs-interrupted', { runs: stale.length })
  }

  const writer = new LiveWriter(db, {
    flushIntervalMs: limits.flushIntervalMs,
    onError: (error) => log('error', 'live.flush-failed', { error: String(error) }),
  })
  const pool = new PipelinePool(limits.workers, limits.displayIntervalMs)
  await pool.ready()

  const live = new Map<string, Promise<LiveSession | null>>()
  const ctx = { db, writer, pool, limits, log, onRunEnded: deps.onRunEnded }

  async function loadSession(sessionId: string): Promise<LiveSession | null> {
    const [row] = await db
      .select({ session: sessions, montage: montages, protocol: protocols })
      .from(sessions)
      .innerJoin(montages, eq(montages.id, sessions.montageId))
      .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
      .where(eq(sessions.id, sessionId))
    if (!row) return null
    const p = row.protocol
    let decoder: SessionSetup['decoder'] = null
    if (row.session.activeDecoderId) {
      const [d] = await db.select().from(decoders).where(eq(decoders.id, row.session.activeDecoderId))
      if (d) decoder = { info: decoderInfo(d), model: d.model as unknown as Decoder }
    }
    const [lastRun] = await db
      .select({ rateHz: runs.rateHz })
      .from(runs)
      .where(and(eq(runs.sessionId, sessionId), isNotNull(runs.rateHz)))
      .orderBy(desc(runs.index))
      .limit(1)
    const setup: SessionSetup = {
      id: row.session.id,
      labId: row.session.labId,
      participantId: row.session.participantId,
      status: row.session.status,
      lockedAt: row.session.lockedAt,
      montage: row.montage.channels.map((c) => c.name),
      timing: {
        classes: p.classes,
        trialsPerClass: p.trialsPerClass,
        fixationSeconds: p.fixationSeconds,
        cueSeconds: p.cueSeconds,
        imagerySeconds: p.imagerySeconds,
        restSeconds: p.restSeconds,
        restJitterSeconds: p.restJitterSeconds,
      },
      band: [p.bandLowHz, p.bandHighHz],
      decoder,
      rateHz: lastRun?.rateHz ?? null,
    }
    return new LiveSession(ctx, setup)
  }

  /** Pause, resume or stop the session's run, audited as run.<action>. */
  async function controlRun(sessionId: string, user: SessionUser | null, action: 'pause' | 'resume' | 'stop'): Promise<RunInfo> {
    const session = await requireSession(sessionId)
    const run = action === 'pause' ? await session.pauseRun() : action === 'resume' ? await session.resumeRun() : await session.stopRun()
    await auditAction(user, `run.${action}`, run.id, { sessionId })
    return run
  }

  function getSession(sessionId: string): Promise<LiveSession | null> {
    let entry = live.get(sessionId)
    if (!entry) {
      entry = loadSession(sessionId).catch((error) => {
        live.delete(sessionId)
        throw error
      })
      live.set(sessionId, entry)
      void entry.then((s) => s === null && live.delete(sessionId))
    }
    return entry
  }

  async function requireSession(sessionId: string): Promise<LiveSession> {
    const session = await getSession(sessionId)
    if (!session) throw new LiveError('no such session', 404)
    return session
  }

  const ingest = new IngestServer({ db, limits, getSession, isClosing: () => closing, log })
  const training = new TrainingJobs(db, (sessionId, info) => {
    void getSession(sessionId).then((s) => s?.operatorHub.publish('training', info))
  })

  const figuresTimer = setInterval(async () => {
    const now = Date.now()
    for (const [id, entry] of live) {
      const session = await entry.catch(() => null)
      if (!session) continue
      if (session.operatorHub.clientCount > 0) session.operatorHub.publish('figures', session.figures(), true)
      if (!closing && session.isIdle(now, limits.idleSessionMs)) {
        // Unloading frees its pipeline and stream buffers; the next use loads it again.
        live.delete(id)
        void session.shutdown(CloseCode.normal, 'session unloaded').catch(() => undefined)
      }
    }
  }, 1000)
  figuresTimer.unref()

  async function auditAction(user: SessionUser | null, action: string, target: string, detail: Record<string, unknown> = {}) {
    const { audit } = await import('../server/audit.server.ts')
    await audit(db, { labId: user?.labId ?? null, actorId: user?.id ?? null, action, target, detail })
  }

  function lastEventId(request: Request): string | null {
    return request.headers.get('Last-Event-ID') ?? new URL(request.url).searchParams.get('lastEventId')
  }

  return {
    limits,

    handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): void {
      ingest.handleUpgrade(req, socket, head)
    },

    /** Clean shutdown: no new links; runs end as interrupted; everything queued is written. */
    async close(): Promise<void> {
      if (closing) return
      closing = true
      clearInterval(figuresTimer)
      const sessionsNow = (await Promise.all([...live.values()].map((e) => e.catch(() => null)))).filter((s): s is LiveSession => s !== null)
      await Promise.all(sessionsNow.map((s) => s.shutdown(CloseCode.serverShutdown, 'the server is shutting down; reconnect later').catch((e) => log('error', 'live.shutdown-session', { error: String(e) }))))
      await ingest.closeAll(CloseCode.serverShutdown, 'the server is shutting down; reconnect later')
      await writer.close()
      await pool.shutdown()
      log('info', 'live.closed', { decisionsLogged: writer.stats.decisionsLogged, flushes: writer.stats.flushes })
    },

    getSession: requireSession,

    async snapshot(sessionId: string): Promise<LiveSnapshot> {
      return (await requireSession(sessionId)).snapshot()
    },

    // ---- runs --------------------------------------------------------------------------
    async startRun(sessionId: string, options: StartRunOptions, user: SessionUser | null): Promise<RunInfo> {
      const run = await (await requireSession(sessionId)).startRun(options, user?.id ?? null)
      await auditAction(user, 'run.start', run.id, { sessionId, kind: run.kind })
      return run
    },
    pauseRun: (sessionId: string, user: SessionUser | null) => controlRun(sessionId, user, 'pause'),
    resumeRun: (sessionId: string, user: SessionUser | null) => controlRun(sessionId, user, 'resume'),
    stopRun: (sessionId: string, user: SessionUser | null) => controlRun(sessionId, user, 'stop'),
    async endSession(sessionId: string, user: SessionUser | null): Promise<void> {
      await (await requireSession(sessionId)).endSession()
      await auditAction(user, 'session.end', sessionId)
    },

    // ---- device tokens and feedback link -----------------------------------------------
    async createDeviceToken(sessionId: string, user: SessionUser, hours: number) {
      const session = await requireSession(sessionId)
      if (session.setup.status === 'ended' || session.setup.lockedAt) throw new LiveError('this session has ended')
      const created = await tokens.createDeviceToken(db, { labId: session.setup.labId, sessionId, createdBy: user.id, hours })
      await auditAction(user, 'device-token.create', created.id, { sessionId, prefix: created.prefix, expiresAt: created.expiresAt.toISOString() })
      return created
    },
    listDeviceTokens(sessionId: string) {
      return tokens.listDeviceTokens(db, sessionId)
    },
    async revokeDeviceToken(sessionId: string, tokenId: string, user: SessionUser): Promise<void> {
      if (!(await tokens.revokeDeviceToken(db, sessionId, tokenId))) throw new LiveError('no such device token', 404)
      await auditAction(user, 'device-token.revoke', tokenId, { sessionId })
      // A link streaming with the revoked token stops now, not at its next reconnect.
      const session = await getSession(sessionId)
      if (session?.link?.tokenId === tokenId) session.link.close(CloseCode.tokenRevoked, 'device token revoked')
    },
    async createFeedbackLink(sessionId: string, user: SessionUser): Promise<string> {
      await requireSession(sessionId)
      const token = await tokens.createFeedbackToken(db, sessionId)
      await auditAction(user, 'feedback-link.create', sessionId)
      return token
    },
    async revokeFeedbackLink(sessionId: string, user: SessionUser): Promise<void> {
      await tokens.revokeFeedbackToken(db, sessionId)
      await auditAction(user, 'feedback-link.revoke', sessionId)
    },
    verifyFeedbackToken(sessionId: string, token: string): Promise<boolean> {
      return tokens.checkFeedbackToken(db, sessionId, token)
    },

    // ---- decoders ----------------------------------------------------------------------
    async train(sessionId: string, input: { runIds: string[]; method: SpatialMethodName | null }, user: SessionUser | null): Promise<TrainingInfo> {
      const session = await requireSession(sessionId)
      const allowed = await db
        .select({ id: runs.id })
        .from(runs)
        .innerJoin(sessions, eq(sessions.id, runs.sessionId))
        .where(and(inArray(runs.id, input.runIds.length > 0 ? input.runIds : ['00000000-0000-0000-0000-000000000000']), eq(sessions.participantId, session.setup.participantId), eq(sessions.labId, session.setup.labId)))
      if (allowed.length !== new Set(input.runIds).size) throw new TrainingError('choose recorded runs of this participant')
      const [montage] = await db.select({ channels: montages.channels }).from(montages).innerJoin(sessions, eq(sessions.montageId, montages.id)).where(eq(sessions.id, sessionId))
      const [protocol] = await db.select().from(protocols).innerJoin(sessions, eq(sessions.protocolId, protocols.id)).where(eq(sessions.id, sessionId))
      const p = protocol.protocols
      const job = await training.start({
        sessionId,
        labId: session.setup.labId,
        participantId: session.setup.participantId,
        runIds: input.runIds,
        method: input.method,
        createdBy: user?.id ?? null,
        options: {
          band: [p.bandLowHz, p.bandHighHz],
          epoch: [p.windowStartSeconds, p.windowEndSeconds],
          windowSeconds: p.decodingWindowSeconds,
          classes: p.classes,
          positions: montage.channels.map(({ name, x, y, z }) => ({ name, x, y, z })),
        },
      })
      await auditAction(user, 'decoder.train', job.jobId, { sessionId, runIds: input.runIds, method: input.method })
      return job
    },
    /** Finished recorded runs of the session's participant, for the training form. */
    async trainableRuns(sessionId: string) {
      const session = await requireSession(sessionId)
      return trainableRuns(db, session.setup.participantId, session.setup.labId)
    },
    trainingJob(sessionId: string, jobId: string): TrainingInfo | undefined {
      return training.get(jobId, sessionId)
    },
    waitForTraining(jobId: string, timeoutMs?: number): Promise<TrainingInfo> {
      return training.wait(jobId, timeoutMs)
    },
    async activateDecoder(sessionId: string, decoderId: string | null, user: SessionUser | null): Promise<DecoderInfo | null> {
      const session = await requireSession(sessionId)
      let next: { info: DecoderInfo; model: Decoder } | null = null
      if (decoderId) {
        const [d] = await db
          .select()
          .from(decoders)
          .where(and(eq(decoders.id, decoderId), eq(decoders.labId, session.setup.labId), eq(decoders.participantId, session.setup.participantId)))
        if (!d) throw new LiveError('no such decoder for this participant', 404)
        next = { info: decoderInfo(d), model: d.model as unknown as Decoder }
        const classes = session.setup.timing.classes
        if (next.model.classes.join(',') !== classes.join(',')) throw new LiveError(`this decoder separates ${next.model.classes.join('/')}, the protocol cues ${classes.join('/')}`)
      }
      session.setDecoder(next)
      await db.update(sessions).set({ activeDecoderId: decoderId }).where(eq(sessions.id, sessionId))
      await auditAction(user, 'decoder.activate', decoderId ?? 'none', { sessionId })
      return next?.info ?? null
    },

    // ---- annotations ---------------------------------------------------------------------
    async addAnnotation(sessionId: string, input: { text: string; runId: string | null; sample: number | null }, user: SessionUser): Promise<AnnotationEvent> {
      const session = await requireSession(sessionId)
      const runId = input.runId ?? (session.run?.active ? session.run.id : null)
      if (input.runId) {
        const [run] = await db.select({ id: runs.id }).from(runs).where(and(eq(runs.id, input.runId), eq(runs.sessionId, sessionId)))
        if (!run) throw new LiveError('no such run in this session', 404)
      }
      const [row] = await db
        .insert(annotations)
        .values({ sessionId, runId, sample: input.sample, authorId: user.id, text: input.text, correction: session.setup.lockedAt !== null })
        .returning()
      const event: AnnotationEvent = { id: row.id, runId: row.runId, sample: row.sample, text: row.text, authorName: user.name, createdAt: row.createdAt.toISOString() }
      session.operatorHub.publish('annotation', event)
      return event
    },

    // ---- streams -----------------------------------------------------------------------
    async operatorStream(sessionId: string, request: Request): Promise<Response> {
      const session = await requireSession(sessionId)
      return hubEventStream({
        hub: session.operatorHub,
        signal: request.signal,
        lastEventId: lastEventId(request),
        clientQueue: limits.sseClientQueue,
        snapshot: () => [{ event: 'snapshot', payload: session.snapshot() }],
      })
    },
    async feedbackStream(sessionId: string, request: Request): Promise<Response> {
      const session = await requireSession(sessionId)
      return hubEventStream({
        hub: session.feedbackHub,
        signal: request.signal,
        lastEventId: lastEventId(request),
        clientQueue: limits.sseClientQueue,
        snapshot: () => [{ event: 'snapshot', payload: session.feedbackSnapshot() }],
      })
    },

    /** Figures for the bench, tests and the health page. */
    stats() {
      return {
        writer: { ...writer.stats },
        workers: pool.layout(),
        links: ingest.connections.size,
        refusals: Object.fromEntries(ingest.refusals),
        sessions: live.size,
      }
    },
    /** Starts the writer's peak figures afresh (the bench measures from its start signal). */
    resetPeaks(): void {
      writer.stats.maxFlushMs = 0
    },
    /** Writes everything queued now (tests, and before a backup). */
    flush(): Promise<void> {
      return writer.flush()
    },
  }
}

function decoderInfo(d: typeof decoders.$inferSelect): DecoderInfo {
  const model = d.model as unknown as Decoder
  return { id: d.id, version: d.version, method: d.method, classes: model.classes ?? [], cvAccuracy: d.cvAccuracy }
}
