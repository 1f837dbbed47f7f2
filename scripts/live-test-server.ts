// A server process for crash, restart and soak tests: the real live services (ingest, decoding
// workers, decision log, runs) on a PGlite data directory, behind a loopback HTTP server with
// a few control endpoints, so a test can SIGKILL it at any moment and start it again on the
// same directory. Not for labs: it has no sign-in. Loopback only; started by
// scripts/crash-cycle.ts and scripts/soak.ts.
//
//   LIVE_TEST_DIR=tmp/crash PORT=4630 node --import tsx scripts/live-test-server.ts
import { createServer } from 'node:http'
import { eq } from 'drizzle-orm'
import { openDatabase } from '../app/db/client.server.ts'
import { decoders, montages, participants, protocols, sessions } from '../app/db/schema.ts'
import { trainDecoder } from '../app/engine/decoder.ts'
import { simulateImagery } from '../app/engine/synthetic.ts'
import { createLiveServices } from '../app/live/index.server.ts'
import { createDeviceToken } from '../app/live/tokens.server.ts'
import { loadConfig } from '../app/server/config.server.ts'
import { seedDemo } from '../app/server/demo.server.ts'

const dir = process.env.LIVE_TEST_DIR
const port = Number(process.env.PORT)
if (!dir || !(port >= 1024)) {
  console.error('set LIVE_TEST_DIR and PORT')
  process.exit(2)
}
const channelCount = Number(process.env.LIVE_TEST_CHANNELS ?? 16)
const rateHz = Number(process.env.LIVE_TEST_RATE_HZ ?? 500)
const workers = Number(process.env.LIVE_TEST_WORKERS ?? 1)

const handle = await openDatabase(dir)
await handle.migrate()
const { db } = handle
const config = loadConfig({ NODE_ENV: 'production', SESSION_SECRET: 'live-test-server-secret-live-test-server', PORT: String(port), TILLER_DATA_DIR: dir })
const live = await createLiveServices({ db, config, limits: { workers }, log: (level, event, fields) => process.stdout.write(JSON.stringify({ level, event, ...fields }) + '\n') })

function rows<T>(result: unknown): T[] {
  return Array.isArray(result) ? (result as T[]) : ((result as { rows: T[] }).rows ?? [])
}

const known: string[] = []

/** Creates the demo lab (once), then N sessions with an active decoder and a device token each. */
async function setup(count: number) {
  const { labId } = await seedDemo(db)
  const [montage] = (await db.select().from(montages).where(eq(montages.labId, labId))).filter((m) => m.channels.length === channelCount)
  if (!montage) throw new Error(`no ${channelCount}-channel montage in the demo lab`)
  const channels = montage.channels.map((c) => c.name)
  const [participant] = await db.select().from(participants).where(eq(participants.code, 'HS-014'))
  const side = Math.round(Math.sqrt(channelCount))
  const { recording, positions } = simulateImagery({ rows: side, cols: channelCount / side, rateHz, trialsPerClass: 10, seed: 11 })
  recording.channels = channels
  const model = trainDecoder(recording, { method: 'csp', pairs: 2, windowSeconds: 1, positions: positions.map((p, i) => ({ ...p, name: channels[i] })) })
  const classes = (model as unknown as { classes: string[] }).classes
  const [protocol] = await db
    .insert(protocols)
    .values({ labId, name: `live test ${Date.now()}`, classes: [...classes], trialsPerClass: 200, fixationSeconds: 1, cueSeconds: 0.5, imagerySeconds: 3, restSeconds: 1, restJitterSeconds: 0.5 })
    .returning()
  const out: { sessionId: string; token: string }[] = []
  for (let i = 0; i < count; i++) {
    const [session] = await db.insert(sessions).values({ labId, participantId: participant.id, protocolId: protocol.id, montageId: montage.id }).returning()
    const [decoder] = await db
      .insert(decoders)
      .values({ labId, participantId: participant.id, sessionId: session.id, version: 1, method: 'csp', trainedOnRunIds: [], model: model as never })
      .returning()
    await live.activateDecoder(session.id, decoder.id, null)
    const { token } = await createDeviceToken(db, { labId, sessionId: session.id, createdBy: null, hours: 24 })
    out.push({ sessionId: session.id, token })
    known.push(session.id)
  }
  return { sessions: out, channels }
}

/** The run's first device sample: decisions and recording chunks count from it. */
async function runStartSample(sessionId: string): Promise<number> {
  // Test-only look inside the live session: the run's start is not stored in the database.
  const session = (await live.getSession(sessionId)) as unknown as { run?: { startSample: number } | null }
  return session.run?.startSample ?? 0
}

const server = createServer(async (req, res) => {
  const url = new URL(req.url ?? '/', 'http://localhost')
  const send = (status: number, value: unknown) => {
    res.statusCode = status
    res.setHeader('Content-Type', 'application/json')
    res.end(JSON.stringify(value))
  }
  try {
    const sessionId = url.searchParams.get('session') ?? ''
    if (url.pathname === '/health') return send(200, { ok: true, pid: process.pid })
    if (url.pathname === '/setup') return send(200, await setup(Number(url.searchParams.get('count') ?? 1)))
    if (url.pathname === '/watch') {
      known.push(sessionId)
      return send(200, { ok: true })
    }
    if (url.pathname === '/start') {
      const kind = url.searchParams.get('kind') === 'calibration' ? 'calibration' : 'feedback'
      const run = await live.startRun(sessionId, { kind }, null)
      return send(200, { runId: run.id, startSample: await runStartSample(sessionId) })
    }
    if (url.pathname === '/stop') return send(200, await live.stopRun(sessionId, null))
    if (url.pathname === '/counts') return send(200, (await live.getSession(sessionId)).counts)
    if (url.pathname === '/stats') {
      const mem = process.memoryUsage()
      const fds = await import('node:fs').then((fs) => (fs.existsSync('/proc/self/fd') ? fs.readdirSync('/proc/self/fd').length : -1))
      return send(200, { ...live.stats(), rssMb: mem.rss / 2 ** 20, heapMb: mem.heapUsed / 2 ** 20, fds, listeners: process.listenerCount('SIGTERM') })
    }
    if (url.pathname === '/latency') {
      await live.flush()
      const result = await db.execute(
        (await import('drizzle-orm')).sql`select count(*)::int as n, percentile_cont(0.5) within group (order by latency_us) as p50,
          percentile_cont(0.99) within group (order by latency_us) as p99 from decisions`,
      )
      return send(200, rows<{ n: number; p50: number; p99: number }>(result)[0])
    }
    if (url.pathname === '/verify') {
      // What a crash test checks after a restart, read by the restarted server from its own database.
      const { sql } = await import('drizzle-orm')
      const runId = url.searchParams.get('run') ?? ''
      const [run] = rows<{ status: string; kind: string }>(await db.execute(sql`select status, kind from runs where id = ${runId}`))
      const decisionSamples = rows<{ sample: number }>(await db.execute(sql`select sample from decisions where run_id = ${runId} order by sample`)).map((r) => Number(r.sample))
      const chunks = rows<{ first: number; count: number }>(
        await db.execute(sql`select first_sample as first, sample_count as count from recording_chunks where run_id = ${runId} order by first_sample`),
      ).map((c) => ({ first: Number(c.first), count: Number(c.count) }))
      const events = rows<{ kind: string }>(await db.execute(sql`select kind from session_events where run_id = ${runId}`)).map((e) => e.kind)
      const [damage] = rows<{ orphans: number; bad_chunks: number; duplicate_decisions: number }>(
        await db.execute(sql`select
          (select count(*)::int from decisions d left join runs r on r.id = d.run_id where r.id is null) as orphans,
          (select count(*)::int from recording_chunks where octet_length(data) <> sample_count * channel_count * 4) as bad_chunks,
          (select count(*)::int from (select run_id, sample from decisions group by run_id, sample having count(*) > 1) x) as duplicate_decisions`),
      )
      return send(200, { run: run ?? null, decisionSamples, chunks, events, damage })
    }
    send(404, { error: 'no such endpoint' })
  } catch (error) {
    send(500, { error: String(error) })
  }
})
server.on('upgrade', (req, socket, head) => {
  if ((req.url ?? '').split('?')[0] === '/ingest') live.handleUpgrade(req, socket, head)
  else socket.destroy()
})
server.listen(port, '127.0.0.1', () => process.stdout.write(JSON.stringify({ event: 'ready', port }) + '\n'))

let stopping = false
process.on('SIGTERM', async () => {
  if (stopping) return
  stopping = true
  server.close()
  server.closeAllConnections()
  await live.close()
  const made: Record<string, number> = {}
  for (const id of new Set(known)) made[id] = (await live.getSession(id).catch(() => null))?.counts.decisionsMade ?? 0
  await handle.close()
  process.stdout.write(JSON.stringify({ event: 'stopped', decisionsMade: made }) + '\n')
  process.exit(0)
})
