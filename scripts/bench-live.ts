// Live latency bench: N simulated device links (64 channels, 500 Hz, 16-sample blocks) stream
// through a real server process (HTTP + WebSocket ingest + live services + PGlite in memory),
// each session decoding with an active decoder in a feedback run and one SSE operator stream
// per session read over loopback. Prints decision latency (block received -> SSE event
// written, from the decision log), decisions made versus logged, CPU and memory, for N = 1, 4,
// 16 without and with a concurrent heavy review query.
//
//   npm run bench:live
//   npm run bench:live -- --devices 16 --seconds 20 --json
//   options: --devices N  --seconds S  --json  --heavy (only with the heavy query)
//            --no-heavy  --port P (default 4250; the server uses P, P+1 ...)
//
// Bounded: every run stops by itself after its seconds; the server child is killed at the end.
import { spawn, type ChildProcess } from 'node:child_process'
import { createServer, request as httpRequest } from 'node:http'
import { loadavg } from 'node:os'
import { performance } from 'node:perf_hooks'
import { fileURLToPath } from 'node:url'
import WebSocket from 'ws'
import { encodeBlock } from '../app/ingest/protocol.ts'

const RATE_HZ = 500
const BLOCK = 16
const CHANNELS = 64

interface Args {
  devices: number[]
  seconds: number
  json: boolean
  heavy: ('off' | 'on')[]
  port: number
  serve: boolean
  /** Where PGlite runs: 'main' (as app/db/client.server.ts opens it) or 'thread' (app/db/pglite-thread.server.ts). */
  db: ('main' | 'thread')[]
  /** 'synthetic': this script's own noise sender (measures end-to-end latency too); 'simulator': simulator/live-device.ts. */
  sender: 'synthetic' | 'simulator'
}

function parseArgs(argv: string[]): Args {
  const get = (name: string) => {
    const i = argv.indexOf(name)
    return i >= 0 ? argv[i + 1] : undefined
  }
  const devices = get('--devices')
  const heavyOnly = argv.includes('--heavy')
  const noHeavy = argv.includes('--no-heavy')
  const json = argv.includes('--json')
  return {
    devices: devices ? [Number(devices)] : [1, 4, 16],
    seconds: Number(get('--seconds') ?? 10),
    json,
    // --json with --devices prints one object, for the run without the heavy query unless --heavy.
    heavy: heavyOnly ? ['on'] : noHeavy || (json && devices) ? ['off'] : ['off', 'on'],
    port: Number(get('--port') ?? 4250),
    serve: argv.includes('--serve'),
    sender: get('--sender') === 'simulator' ? 'simulator' : 'synthetic',
    // The database always runs on its own thread now, as in server.ts.
    db: ['thread'],
  }
}

// ---------------------------------------------------------------------------------------
// Server child: the real live services on an in-memory database, behind a plain HTTP server.
// ---------------------------------------------------------------------------------------

async function serve(port: number, devices: number, dbMode: 'main' | 'thread'): Promise<void> {
  const { eq, sql } = await import('drizzle-orm')
  const { openDatabase } = await import('../app/db/client.server.ts')
  const schema = await import('../app/db/schema.ts')
  const { seedDemo } = await import('../app/server/demo.server.ts')
  const { loadConfig } = await import('../app/server/config.server.ts')
  const { createLiveServices } = await import('../app/live/index.server.ts')
  const { createDeviceToken } = await import('../app/live/tokens.server.ts')
  const { trainDecoder } = await import('../app/engine/decoder.ts')
  const { simulateImagery } = await import('../app/engine/synthetic.ts')

  // The same opener as server.ts: PGlite on its own thread (docs/decisions/001-live-decoding.md).
  void dbMode
  const handle = await openDatabase('memory://')
  await handle.migrate()
  const db = handle.db
  const { labId } = await seedDemo(db)
  const config = loadConfig({ NODE_ENV: 'production', SESSION_SECRET: 'bench-secret-bench-secret-bench-secret', PORT: String(port) })
  const live = await createLiveServices({ db, config, log: () => undefined })
  const [montage] = (await db.select().from(schema.montages).where(eq(schema.montages.labId, labId))).filter((m) => m.channels.length === CHANNELS)
  const [participant] = await db.select().from(schema.participants).where(eq(schema.participants.labId, labId))
  const [protocol] = await db
    .insert(schema.protocols)
    .values({ labId, name: 'bench', classes: ['left', 'right'], trialsPerClass: 200, fixationSeconds: 1, cueSeconds: 0.5, imagerySeconds: 3, restSeconds: 1, restJitterSeconds: 0.5 })
    .returning()
  const names = montage.channels.map((c) => c.name)
  // One decoder for all sessions: CSP + LDA trained on the engine's synthetic recording, renamed to the montage.
  const { recording, positions } = simulateImagery({ rows: 8, cols: 8, rateHz: RATE_HZ, trialsPerClass: 10, seed: 3 })
  recording.channels = names
  const model = trainDecoder(recording, { method: 'csp', pairs: 3, windowSeconds: 1, positions: positions.map((p, i) => ({ ...p, name: names[i] })) })
  const setup: { sessionId: string; token: string }[] = []
  for (let i = 0; i < devices; i++) {
    const [session] = await db.insert(schema.sessions).values({ labId, participantId: participant.id, protocolId: protocol.id, montageId: montage.id }).returning()
    const [decoder] = await db
      .insert(schema.decoders)
      .values({ labId, participantId: participant.id, sessionId: session.id, version: i + 1, method: 'csp', trainedOnRunIds: [], model: model as never })
      .returning()
    await live.activateDecoder(session.id, decoder.id, null)
    const { token } = await createDeviceToken(db, { labId, sessionId: session.id, createdBy: null, hours: 1 })
    setup.push({ sessionId: session.id, token })
  }
  // Seed review data so the heavy query has something to chew on: 200 000 decisions of 50 earlier runs.
  await db.execute(sql`insert into decisions (session_id, run_id, trial_index, sample, received_at, output, probability, decided_class, cue, latency_us)
    select ${setup[0].sessionId}::uuid, md5((g % 50)::text)::uuid, g % 40, g, now(), random(), random(), case when random() < 0.5 then 'left' else 'right' end, 'left', (random() * 1000)::int
    from generate_series(1, 200000) g`)
  const seeded = 200000

  const { monitorEventLoopDelay } = await import('node:perf_hooks')
  const loopDelay = monitorEventLoopDelay({ resolution: 5 })
  loopDelay.enable()
  // Latency figures leave out the first second of the runs (16 run starts and the devices' catch-up).
  const WARM_UP_MS = 1000
  let measureFromMs = Date.now()
  let eluStart = performance.eventLoopUtilization()
  let cpuStart = process.cpuUsage()
  let wallStart = performance.now()
  let rssStart = process.memoryUsage().rss
  let heapStart = process.memoryUsage().heapUsed

  const server = createServer(async (req, res) => {
    const url = new URL(req.url ?? '/', 'http://localhost')
    const send = (value: unknown) => {
      res.setHeader('Content-Type', 'application/json')
      res.end(JSON.stringify(value))
    }
    if (url.pathname === '/setup') return send({ sessions: setup, channels: names })
    if (url.pathname === '/start') {
      for (const s of setup) await live.startRun(s.sessionId, { kind: 'feedback' }, null)
      await live.flush()
      live.resetPeaks()
      cpuStart = process.cpuUsage()
      eluStart = performance.eventLoopUtilization()
      loopDelay.reset()
      wallStart = performance.now()
      measureFromMs = Date.now() + WARM_UP_MS
      rssStart = process.memoryUsage().rss
      heapStart = process.memoryUsage().heapUsed
      return send({ ok: true })
    }
    if (url.pathname === '/heavy') {
      // A review query of the kind the supervisor's screens run: per-run latency and class
      // figures over the whole decision log, joined and sorted.
      const started = performance.now()
      await db.execute(sql`select run_id, count(*), avg(latency_us), percentile_cont(0.99) within group (order by latency_us),
          sum(case when decided_class = cue then 1 else 0 end)::float / count(*) from decisions group by run_id order by 2 desc`)
      return send({ ms: performance.now() - started })
    }
    if (url.pathname === '/stats') {
      const elu = performance.eventLoopUtilization(eluStart)
      for (const s of setup) await live.stopRun(s.sessionId, null).catch(() => undefined)
      await live.flush()
      const cpu = process.cpuUsage(cpuStart)
      const wallMs = performance.now() - wallStart
      let made = 0
      for (const s of setup) made += (await live.getSession(s.sessionId)).counts.decisionsMade
      const result = await db.execute(sql`select count(*)::int as n,
          percentile_cont(0.5) within group (order by latency_us) as p50,
          percentile_cont(0.99) within group (order by latency_us) as p99,
          max(latency_us) as max,
          count(*) filter (where received_at >= to_timestamp(${measureFromMs / 1000}))::int as measured from decisions where id > ${seeded}
          and received_at >= to_timestamp(${measureFromMs / 1000})`)
      const all = await db.execute(sql`select count(*)::int as n from decisions where id > ${seeded}`)
      const loggedAll = (all as unknown as { rows: { n: number }[] }).rows[0].n
      const row = (result as unknown as { rows: { n: number; p50: number; p99: number; max: number; measured: number }[] }).rows[0]
      const slow = await db.execute(sql`select latency_us, extract(epoch from received_at) * 1000 as at from decisions where id > ${seeded} order by latency_us desc limit 8`)
      const runStart = performance.timeOrigin + wallStart
      if (process.env.BENCH_DEBUG) console.error('slowest', (slow as unknown as { rows: { latency_us: number; at: number }[] }).rows.map((r) => `${(r.latency_us / 1000).toFixed(1)}ms@${(r.at - runStart).toFixed(0)}`).join(' '), 'eventloop p99', (loopDelay.percentile(99) / 1e6).toFixed(1), 'max', (loopDelay.max / 1e6).toFixed(1))
      return send({
        decisionsMade: made,
        decisionsLogged: loggedAll,
        decisionsMeasured: row.measured,
        p50Ms: row.p50 / 1000,
        p99Ms: row.p99 / 1000,
        maxMs: row.max / 1000,
        cpuPercentOfOneCore: ((cpu.user + cpu.system) / 1000 / wallMs) * 100,
        mainThreadBusyPercent: elu.utilization * 100,
        rssMbStart: rssStart / 2 ** 20,
        rssMbEnd: process.memoryUsage().rss / 2 ** 20,
        heapMbStart: heapStart / 2 ** 20,
        heapMbEnd: process.memoryUsage().heapUsed / 2 ** 20,
        writer: live.stats().writer,
        workers: live.stats().workers,
      })
    }
    const stream = url.pathname.match(/^\/live\/([0-9a-f-]{36})\/operator$/)
    if (stream) {
      const controller = new AbortController()
      req.on('close', () => controller.abort())
      const response = await live.operatorStream(stream[1], new Request(`http://localhost${url.pathname}`, { signal: controller.signal }))
      res.writeHead(200, Object.fromEntries(response.headers))
      const reader = response.body!.getReader()
      for (;;) {
        const { done, value } = await reader.read()
        if (done) break
        if (!res.write(value)) await new Promise((r) => res.once('drain', r))
      }
      res.end()
      return
    }
    res.statusCode = 404
    res.end()
  })
  server.on('upgrade', (req, socket, head) => live.handleUpgrade(req, socket, head))
  server.listen(port, '127.0.0.1', () => process.send?.({ ready: true }))
  process.on('SIGTERM', async () => {
    await live.close()
    process.exit(0)
  })
}

// ---------------------------------------------------------------------------------------
// Driver: devices, SSE readers, the heavy query loop, figures.
// ---------------------------------------------------------------------------------------

function getJson<T>(port: number, path: string): Promise<T> {
  return new Promise((resolve, reject) => {
    httpRequest({ host: '127.0.0.1', port, path }, (res) => {
      let body = ''
      res.on('data', (c) => (body += c))
      res.on('end', () => {
        try {
          resolve(JSON.parse(body) as T)
        } catch (error) {
          reject(error)
        }
      })
    })
      .on('error', reject)
      .end()
  })
}

interface RunFigures {
  devices: number
  sender: Args['sender']
  database_thread: 'main' | 'thread'
  load_average_1min: number
  seconds: number
  heavy_query: boolean
  p50_ms: number
  p99_ms: number
  max_ms: number
  e2e_p50_ms: number | null
  e2e_p99_ms: number | null
  decisions_made: number
  decisions_logged: number
  heavy_queries: number
  heavy_query_ms_median: number | null
  cpu_percent_of_one_core: number
  main_thread_busy_percent: number
  rss_mb_start: number
  rss_mb_end: number
  /** JavaScript heap of the server; rss also grows by the recording kept in the in-memory database (~2 MB/s at 16 devices). */
  heap_mb_start: number
  heap_mb_end: number
  max_flush_ms: number
}

async function runOnce(devices: number, seconds: number, heavy: boolean, port: number, dbMode: 'main' | 'thread', sender: Args['sender']): Promise<RunFigures> {
  const profile = process.env.BENCH_CPU_PROFILE ? ['--cpu-prof', `--cpu-prof-dir=${process.env.BENCH_CPU_PROFILE}`] : []
  const child: ChildProcess = spawn(process.execPath, [...profile, ...process.execArgv, fileURLToPath(import.meta.url), '--serve', '--port', String(port), '--devices', String(devices), '--db', dbMode], {
    stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
  })
  const killTimer = setTimeout(() => child.kill('SIGKILL'), (seconds + 120) * 1000)
  try {
    await new Promise<void>((resolve, reject) => {
      child.once('message', () => resolve())
      child.once('exit', (code) => reject(new Error(`bench server exited (${code})`)))
    })
    const { sessions, channels } = await getJson<{ sessions: { sessionId: string; token: string }[]; channels: string[] }>(port, '/setup')

    // SSE readers: one operator stream per session, end-to-end latency by decision sample.
    const sentAt = sessions.map(() => new Map<number, number>())
    const e2e: number[] = []
    const readers = sessions.map((s, i) => {
      const req = httpRequest({ host: '127.0.0.1', port, path: `/live/${s.sessionId}/operator` }, (res) => {
        let buffer = ''
        res.setEncoding('utf8')
        res.on('data', (chunk: string) => {
          buffer += chunk
          let end: number
          while ((end = buffer.indexOf('\n\n')) >= 0) {
            const frame = buffer.slice(0, end)
            buffer = buffer.slice(end + 2)
            if (!frame.includes('event: decision')) continue
            const data = frame.slice(frame.indexOf('data: ') + 6)
            const sample = Number(/"sample":(\d+)/.exec(data)?.[1])
            const t = sentAt[i].get(sample)
            if (t !== undefined) {
              e2e.push(performance.now() - t)
              sentAt[i].delete(sample)
            }
          }
        })
      })
      req.on('error', () => undefined)
      req.end()
      return req
    })

    // Devices: one WebSocket each, blocks paced by the wall clock from one shared timer.
    const block = new Float32Array(CHANNELS * BLOCK)
    let x = 1
    const simulated: { stop(): Promise<void> }[] = []
    if (sender === 'simulator') {
      const { startLiveDevice } = await import('../simulator/live-device.ts')
      for (const [i, s] of sessions.entries()) {
        const device = startLiveDevice({ url: `ws://127.0.0.1:${port}/ingest`, token: s.token, channels, rateHz: RATE_HZ, blockSamples: BLOCK, seed: i + 1, device: 'simulator (bench)' })
        await new Promise<void>((resolve) => {
          const off = device.on('message', (m) => m.type === 'welcome' && (off(), resolve()))
        })
        simulated.push(device)
      }
    }
    const links = sender === 'simulator' ? [] : await Promise.all(
      sessions.map(
        (s) =>
          new Promise<{ ws: WebSocket; seq: number; sample: number }>((resolve, reject) => {
            const ws = new WebSocket(`ws://127.0.0.1:${port}/ingest`)
            const link = { ws, seq: 0, sample: 0 }
            ws.on('open', () => ws.send(JSON.stringify({ type: 'hello', protocol: 1, token: s.token, device: 'bench', channels, rateHz: RATE_HZ, units: 'uV' })))
            ws.on('message', (data) => {
              const m = JSON.parse(data.toString())
              if (m.type === 'welcome') resolve(link)
            })
            ws.on('close', (code, reason) => reject(new Error(`device link closed ${code} ${reason}`)))
            ws.on('error', reject)
          }),
      ),
    )
    const started = performance.now()
    let blocksSent = 0
    const pace = setInterval(() => {
      const due = Math.floor((((performance.now() - started) / 1000) * RATE_HZ) / BLOCK)
      while (blocksSent < due) {
        for (let l = 0; l < links.length; l++) {
          const link = links[l]
          for (let i = 0; i < block.length; i++) {
            x = (x * 1103515245 + 12345) >>> 0
            block[i] = (x / 4294967296 - 0.5) * 40
          }
          if (link.ws.readyState !== WebSocket.OPEN) continue
          const lastSample = link.sample + BLOCK - 1
          link.ws.send(encodeBlock({ seq: link.seq++, firstSample: link.sample, channelCount: CHANNELS, samples: block }))
          sentAt[l].set(lastSample, performance.now())
          if (sentAt[l].size > 4096) sentAt[l].clear()
          link.sample += BLOCK
        }
        blocksSent++
      }
    }, 2)
    await new Promise((r) => setTimeout(r, 1500))
    await getJson(port, '/start')
    e2e.length = 0

    let heavyCount = 0
    const heavyMs: number[] = []
    let stopHeavy = false
    const heavyLoop = heavy
      ? (async () => {
          while (!stopHeavy) {
            const { ms } = await getJson<{ ms: number }>(port, '/heavy')
            heavyMs.push(ms)
            heavyCount++
          }
        })()
      : Promise.resolve()

    await new Promise((r) => setTimeout(r, seconds * 1000))
    stopHeavy = true
    await heavyLoop
    clearInterval(pace)
    await Promise.all(simulated.map((d) => d.stop().catch(() => undefined)))
    await new Promise((r) => setTimeout(r, 300))
    const stats = await getJson<{
      decisionsMade: number
      decisionsLogged: number
      p50Ms: number
      p99Ms: number
      maxMs: number
      cpuPercentOfOneCore: number
      mainThreadBusyPercent: number
      rssMbStart: number
      rssMbEnd: number
      heapMbStart: number
      heapMbEnd: number
      writer: { maxFlushMs: number }
    }>(port, '/stats')
    for (const link of links) link.ws.close(1000, 'bench done')
    for (const r of readers) r.destroy()
    e2e.sort((a, b) => a - b)
    heavyMs.sort((a, b) => a - b)
    const q = (arr: number[], p: number) => (arr.length ? arr[Math.min(arr.length - 1, Math.floor(p * arr.length))] : null)
    return {
      devices,
      sender,
      database_thread: dbMode,
      load_average_1min: round(loadavg()[0]),
      seconds,
      heavy_query: heavy,
      p50_ms: round(stats.p50Ms),
      p99_ms: round(stats.p99Ms),
      max_ms: round(stats.maxMs),
      e2e_p50_ms: roundOrNull(q(e2e, 0.5)),
      e2e_p99_ms: roundOrNull(q(e2e, 0.99)),
      decisions_made: stats.decisionsMade,
      decisions_logged: stats.decisionsLogged,
      heavy_queries: heavyCount,
      heavy_query_ms_median: roundOrNull(q(heavyMs, 0.5)),
      cpu_percent_of_one_core: round(stats.cpuPercentOfOneCore),
      main_thread_busy_percent: round(stats.mainThreadBusyPercent),
      rss_mb_start: round(stats.rssMbStart),
      rss_mb_end: round(stats.rssMbEnd),
      heap_mb_start: round(stats.heapMbStart),
      heap_mb_end: round(stats.heapMbEnd),
      max_flush_ms: round(stats.writer.maxFlushMs),
    }
  } finally {
    clearTimeout(killTimer)
    child.kill('SIGTERM')
    await new Promise((r) => {
      const t = setTimeout(() => {
        child.kill('SIGKILL')
        r(null)
      }, 5000)
      child.once('exit', () => {
        clearTimeout(t)
        r(null)
      })
    })
  }
}

function round(v: number): number {
  return Math.round(v * 1000) / 1000
}
function roundOrNull(v: number | null): number | null {
  return v === null ? null : round(v)
}

async function main() {
  const args = parseArgs(process.argv.slice(2))
  if (args.serve) {
    await serve(args.port, args.devices[0], args.db[0])
    return
  }
  // Keep the driver from exiting with a dangling server if interrupted.
  void createServer
  const results: RunFigures[] = []
  let port = args.port
  for (const dbMode of args.db)
  for (const heavy of args.heavy) {
    for (const devices of args.devices) {
      const r = await runOnce(devices, args.seconds, heavy === 'on', port++, dbMode, args.sender)
      results.push(r)
      if (!args.json) {
        console.log(
          `db ${r.database_thread.padEnd(6)} devices ${String(r.devices).padStart(2)}  heavy query ${r.heavy_query ? 'on ' : 'off'}  latency p50 ${r.p50_ms.toFixed(2)} ms  p99 ${r.p99_ms.toFixed(2)} ms  max ${r.max_ms.toFixed(1)} ms` +
            `  ${r.e2e_p50_ms === null ? '' : `(end to end p50 ${r.e2e_p50_ms.toFixed(2)} p99 ${r.e2e_p99_ms?.toFixed(2)} ms)`}  decisions made ${r.decisions_made} logged ${r.decisions_logged}` +
            `  cpu ${r.cpu_percent_of_one_core.toFixed(0)} % of a core (main thread busy ${r.main_thread_busy_percent.toFixed(0)} %)  rss ${r.rss_mb_start.toFixed(0)} -> ${r.rss_mb_end.toFixed(0)} MB, heap ${r.heap_mb_start.toFixed(0)} -> ${r.heap_mb_end.toFixed(0)} MB` +
            (r.heavy_query ? `  heavy queries ${r.heavy_queries} (median ${r.heavy_query_ms_median?.toFixed(0)} ms)` : '') + `  load ${r.load_average_1min}`,
        )
      }
    }
  }
  if (args.json) console.log(JSON.stringify(results.length === 1 ? results[0] : results))
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
