// Measures the simulator: (1) pure generation speed at 128 channels / 1000 Hz, (2) one live
// device at 128 ch / 1000 Hz and (3) 16 live devices at 64 ch / 500 Hz streaming to a sink on
// 127.0.0.1, with the CPU the devices use (main-thread event-loop utilisation: the sink runs in
// a worker thread so it is not counted) and whether every device kept up with the wall clock.
// Bounded: each live phase runs a fixed number of seconds and stops by itself.
// Usage: npx tsx scripts/bench-simulator.ts [--seconds 10] [--port 4150]
import { performance } from 'node:perf_hooks'
import { Worker } from 'node:worker_threads'
import { sensorimotorChannels } from '../simulator/channels'
import { createSimulatedParticipant } from '../simulator/generator'
import { startLiveDevice, type LiveDevice } from '../simulator/live-device'

const argValue = (flag: string, fallback: number) => {
  const i = process.argv.indexOf(flag)
  return i >= 0 ? Number(process.argv[i + 1]) : fallback
}
const seconds = argValue('--seconds', 10)
const port = argValue('--port', 4150)

/** Real-time factors: data seconds per wall second, and per CPU second (robust to a busy machine). */
function pureGeneration(channels: number, rateHz: number, dataSeconds: number): string {
  const p = createSimulatedParticipant({ channels: sensorimotorChannels(channels), rateHz, seed: 1 })
  const blockSamples = Math.round(rateHz * 0.04)
  const block = new Float32Array(blockSamples * channels)
  p.generate(rateHz, new Float32Array(rateHz * channels)) // warm up the JIT
  const t0 = performance.now()
  const cpu0 = process.cpuUsage()
  for (let n = 0; n < (dataSeconds * rateHz) / blockSamples; n++) p.generate(blockSamples, block)
  const cpu = process.cpuUsage(cpu0)
  const wallFactor = (dataSeconds * 1000) / (performance.now() - t0)
  const cpuFactor = dataSeconds / ((cpu.user + cpu.system) / 1e6)
  return `${wallFactor.toFixed(1)} × real time by the wall clock, ${cpuFactor.toFixed(1)} × per CPU second`
}

// The sink: accepts hellos, welcomes, counts binary bytes per link. Plain JS in a worker.
const SINK = `
const { parentPort, workerData } = require('node:worker_threads')
const { WebSocketServer } = require(workerData.wsPath)
const wss = new WebSocketServer({ host: '127.0.0.1', port: workerData.port, path: '/ingest', maxPayload: 2 ** 21 })
const counts = new Map()
let id = 0
wss.on('connection', (socket) => {
  const me = id++
  counts.set(me, 0)
  socket.on('message', (data, isBinary) => {
    if (!isBinary) {
      socket.send(JSON.stringify({ type: 'welcome', protocol: 1, sessionId: 'bench', runId: null, nextSample: 0 }))
      return
    }
    counts.set(me, counts.get(me) + data.length)
  })
})
wss.on('listening', () => parentPort.postMessage({ type: 'ready' }))
parentPort.on('message', (m) => {
  if (m === 'report') parentPort.postMessage({ type: 'report', bytes: [...counts.values()] })
  if (m === 'close') { for (const c of wss.clients) c.terminate(); wss.close(() => parentPort.postMessage({ type: 'closed' })) }
})
`

async function startSink(): Promise<Worker> {
  const { createRequire } = await import('node:module')
  const wsPath = createRequire(import.meta.url).resolve('ws')
  const worker = new Worker(SINK, { eval: true, workerData: { port, wsPath } })
  await new Promise<void>((resolve, reject) => {
    worker.once('message', () => resolve())
    worker.once('error', reject)
  })
  return worker
}

const ask = (worker: Worker, message: string, type: string) =>
  new Promise<{ bytes?: number[] }>((resolve) => {
    const on = (m: { type: string; bytes?: number[] }) => {
      if (m.type === type) {
        worker.off('message', on)
        resolve(m)
      }
    }
    worker.on('message', on)
    worker.postMessage(message)
  })

async function livePhase(worker: Worker, count: number, channels: number, rateHz: number) {
  const devices: LiveDevice[] = []
  for (let i = 0; i < count; i++) {
    devices.push(startLiveDevice({ url: `ws://127.0.0.1:${port}/ingest`, token: 'bench-token-0001', channels: sensorimotorChannels(channels), rateHz, seed: 100 + i }))
  }
  while (devices.some((d) => d.state !== 'streaming')) await new Promise((r) => setTimeout(r, 10))
  const startSamples = devices.map((d) => d.stats.samplesGenerated)
  const elu0 = performance.eventLoopUtilization()
  const cpu0 = process.cpuUsage()
  const t0 = performance.now()
  await new Promise((r) => setTimeout(r, seconds * 1000))
  const wall = (performance.now() - t0) / 1000
  const elu = performance.eventLoopUtilization(elu0)
  const cpu = process.cpuUsage(cpu0)
  const generated = devices.map((d, i) => d.stats.samplesGenerated - startSamples[i])
  const behind = devices.filter((d) => d.faultLog().some((e) => e.kind === 'behind')).length
  await Promise.all(devices.map((d) => d.stop()))
  const report = await ask(worker, 'report', 'report')
  const expected = wall * rateHz
  const worst = Math.min(...generated) / expected
  console.log(
    `${count} device(s) × ${channels} ch × ${rateHz} Hz for ${wall.toFixed(1)} s: ` +
      `device thread busy ${(100 * elu.utilization).toFixed(1)} % of one core ` +
      `(process CPU incl. sink ${((100 * (cpu.user + cpu.system)) / 1e6 / wall).toFixed(1)} %), ` +
      `slowest device produced ${(100 * worst).toFixed(1)} % of real time, ${behind} fell behind, ` +
      `sink received ${(report.bytes!.reduce((a, b) => a + b, 0) / 1e6).toFixed(1)} MB`,
  )
  return { utilization: elu.utilization, worst, behind }
}

async function main() {
  console.log(`load average ${(await import('node:os')).loadavg().map((v) => v.toFixed(1)).join(' ')} on ${(await import('node:os')).cpus().length} cores`)
  console.log(`pure generation, 128 ch × 1000 Hz: ${pureGeneration(128, 1000, 20)}`)
  console.log(`pure generation, 64 ch × 500 Hz: ${pureGeneration(64, 500, 20)}`)
  const sink = await startSink()
  try {
    await livePhase(sink, 1, 128, 1000)
    await livePhase(sink, 16, 64, 500)
  } finally {
    await ask(sink, 'close', 'closed')
    await sink.terminate()
  }
}

await main()
