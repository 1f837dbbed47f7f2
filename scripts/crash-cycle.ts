// Crash and restart cycles against scripts/live-test-server.ts on one PGlite data directory:
// a device streams, a calibration or feedback run is in progress, the server is SIGKILLed at a
// random moment, started again, and the restarted server is asked what survived. Checked after
// every restart: the database opens; no orphan decision, damaged recording chunk or duplicate
// decision; every decision acknowledged to the device as durable (ack.durableSample) is there
// and so is the recording up to it; the interrupted run is marked interrupted with its event;
// the device reconnects and a new run starts. Last, a clean SIGTERM mid-run must lose nothing.
// Used by tests/unit/crash-restart.test.ts (3 kills) and `npm run soak` (20 or more).
import { spawn, type ChildProcess } from 'node:child_process'
import { rmSync } from 'node:fs'
import { resolve } from 'node:path'
import { BLOCK, connect, pacedStream, type DeviceLink } from '../tests/support/device-link.ts'

const ROOT = resolve(import.meta.dirname, '..')
/** scripts/live-test-server.ts protocols keep the default 1 s decoding window, at 500 Hz. */
const DECODING_WINDOW_SAMPLES = 500

export interface Child {
  proc: ChildProcess
  base: string
  output(): string
  kill(): Promise<void>
  /** SIGTERM; resolves with the decisions made per session, as the server reported on stopping. */
  term(): Promise<Record<string, number>>
}

export async function startChild(dir: string, port: number, env: Record<string, string> = {}): Promise<Child> {
  const proc = spawn(process.execPath, ['--import', 'tsx', 'scripts/live-test-server.ts'], {
    cwd: ROOT,
    env: { ...process.env, LIVE_TEST_DIR: dir, PORT: String(port), ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  })
  let out = ''
  const add = (b: Buffer) => {
    out += b.toString()
    if (out.length > 1_000_000) out = out.slice(-500_000)
  }
  proc.stdout!.on('data', add)
  proc.stderr!.on('data', add)
  const exited = new Promise<void>((r) => proc.once('exit', () => r()))
  const base = `http://127.0.0.1:${port}`
  const deadline = Date.now() + 90_000
  for (;;) {
    if (proc.exitCode !== null) throw new Error(`live test server exited (${proc.exitCode}):\n${out.slice(-3000)}`)
    if (Date.now() > deadline) {
      proc.kill('SIGKILL')
      throw new Error(`live test server did not come up:\n${out.slice(-3000)}`)
    }
    try {
      if ((await fetch(`${base}/health`, { signal: AbortSignal.timeout(1_000) })).ok) break
    } catch {
      // starting
    }
    await new Promise((r) => setTimeout(r, 100))
  }
  return {
    proc,
    base,
    output: () => out,
    async kill() {
      if (proc.exitCode === null && proc.signalCode === null) proc.kill('SIGKILL')
      await exited
    },
    async term() {
      proc.kill('SIGTERM')
      const timer = setTimeout(() => proc.kill('SIGKILL'), 30_000)
      await exited
      clearTimeout(timer)
      const line = out.split('\n').find((l) => l.includes('"event":"stopped"'))
      if (!line) throw new Error(`no clean stop reported (exit ${proc.exitCode}, signal ${proc.signalCode}):\n${out.slice(-2000)}`)
      return JSON.parse(line).decisionsMade
    },
  }
}

async function call<T>(child: Child, path: string): Promise<T> {
  const res = await fetch(`${child.base}${path}`, { method: 'POST', signal: AbortSignal.timeout(30_000) })
  const body = await res.json()
  if (!res.ok) throw new Error(`${path}: ${res.status} ${JSON.stringify(body)}`)
  return body as T
}

interface Verify {
  run: { status: string; kind: string } | null
  decisionSamples: number[]
  chunks: { first: number; count: number }[]
  events: string[]
  damage: { orphans: number; bad_chunks: number; duplicate_decisions: number }
}

/** Problems found in what survived a run (empty when everything acknowledged is there). */
export function checkSurvivors(v: Verify, expect: { status: string; startSample: number; durableSample: number; decisionsMade?: number }): string[] {
  const problems: string[] = []
  if (!v.run) return ['the run is missing']
  if (v.run.status !== expect.status) problems.push(`run status ${v.run.status}, expected ${expect.status}`)
  if (expect.status === 'interrupted' && !v.events.includes('run_interrupted')) problems.push('no run_interrupted event')
  if (v.damage.orphans > 0) problems.push(`${v.damage.orphans} decisions of no run`)
  if (v.damage.bad_chunks > 0) problems.push(`${v.damage.bad_chunks} recording chunks whose size does not match their header`)
  if (v.damage.duplicate_decisions > 0) problems.push(`${v.damage.duplicate_decisions} duplicate decisions`)
  // Acknowledged: every block up to durableSample was decided and recorded durably.
  const durable = expect.durableSample - expect.startSample
  if (durable > 0) {
    const lastAcked = durable - 1
    const decided = new Set(v.decisionSamples)
    const first = v.decisionSamples[0]
    // The first decision comes once the decoding window (1 s of the protocol, 500 samples) is full.
    if (first === undefined || first > lastAcked) {
      if (lastAcked >= DECODING_WINDOW_SAMPLES + BLOCK) problems.push(`no decision up to the acknowledged sample ${lastAcked}`)
    } else for (let s = first; s <= lastAcked; s += BLOCK) if (!decided.has(s)) problems.push(`acknowledged decision at sample ${s} is missing`)
    let covered = 0
    for (const c of v.chunks) {
      if (c.first !== covered) {
        if (c.first < durable) problems.push(`recording has a hole or overlap at sample ${covered} (next chunk starts at ${c.first})`)
        break
      }
      covered += c.count
    }
    if (covered < durable) problems.push(`recording covers ${covered} samples, ${durable} were acknowledged`)
  }
  if (expect.decisionsMade !== undefined && v.decisionSamples.length !== expect.decisionsMade) {
    problems.push(`${v.decisionSamples.length} decisions logged, ${expect.decisionsMade} made`)
  }
  return problems.slice(0, 10)
}

/** A small deterministic random source (mulberry32), so a failing cycle can be replayed by seed. */
export function random(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

export interface CycleReport {
  kills: number
  survived: number
  problems: string[]
  acked: number[]
  cleanStop: { made: number; logged: number; problems: string[] }
  restartMs: number[]
}

interface Streaming {
  link: DeviceLink
  stop(): void
  lastAck: { durableSeq: number; durableSample: number } | null
  runId: string
  startSample: number
}

async function attachAndRun(child: Child, session: { sessionId: string; token: string }, channels: string[], kind: 'calibration' | 'feedback', resumeRunId?: string): Promise<Streaming> {
  const state: Streaming = { link: null as unknown as DeviceLink, stop: () => undefined, lastAck: null, runId: '', startSample: 0 }
  const link = await connect(`${child.base.replace('http', 'ws')}/ingest`, {
    keepMessages: false,
    onMessage: (m) => {
      if (m.type === 'ack') state.lastAck = { durableSeq: Number(m.durableSeq), durableSample: Number(m.durableSample) }
    },
  })
  link.hello({ token: session.token, channels, ...(resumeRunId ? { resumeRunId } : {}) })
  const welcome = await link.welcome(15_000)
  const stream = pacedStream(link, channels.length, welcome.nextSample)
  await new Promise((r) => setTimeout(r, 300))
  const started = await call<{ runId: string; startSample: number }>(child, `/start?session=${session.sessionId}&kind=${kind}`)
  state.link = link
  state.stop = () => stream.stop()
  state.runId = started.runId
  state.startSample = started.startSample
  return state
}

export async function runCrashCycles(options: { dir: string; port: number; kills: number; seed?: number; minMs?: number; maxMs?: number; log?: (line: string) => void }): Promise<CycleReport> {
  const { dir, port, kills } = options
  const rand = random(options.seed ?? 7)
  const log = options.log ?? (() => undefined)
  rmSync(resolve(ROOT, dir), { recursive: true, force: true })
  const report: CycleReport = { kills: 0, survived: 0, problems: [], acked: [], cleanStop: { made: 0, logged: 0, problems: [] }, restartMs: [] }

  let child = await startChild(dir, port)
  const { sessions, channels } = await call<{ sessions: { sessionId: string; token: string }[]; channels: string[] }>(child, '/setup?count=1')
  const session = sessions[0]
  await call(child, `/watch?session=${session.sessionId}`)
  let previous: { runId: string; startSample: number; durableSample: number } | null = null

  try {
    for (let i = 0; i <= kills; i++) {
      if (previous) {
        const v = await call<Verify>(child, `/verify?run=${previous.runId}`)
        const problems = checkSurvivors(v, { status: 'interrupted', startSample: previous.startSample, durableSample: previous.durableSample })
        if (problems.length === 0) report.survived++
        for (const p of problems) report.problems.push(`after kill ${i}: ${p}`)
        log(`kill ${i}: run ${previous.runId.slice(0, 8)} ${problems.length === 0 ? 'ok' : problems.join('; ')} (acked ${previous.durableSample - previous.startSample} samples)`)
      }
      if (i === kills) break
      const kind = i % 2 === 0 ? 'calibration' : 'feedback'
      const s = await attachAndRun(child, session, channels, kind, previous?.runId)
      const waitMs = (options.minMs ?? 1_000) + rand() * ((options.maxMs ?? 3_000) - (options.minMs ?? 1_000))
      await new Promise((r) => setTimeout(r, waitMs))
      const ack = s.lastAck
      await child.kill()
      s.stop()
      report.kills++
      report.acked.push(ack ? ack.durableSample - s.startSample : 0)
      previous = { runId: s.runId, startSample: s.startSample, durableSample: ack?.durableSample ?? 0 }
      const restartAt = performance.now()
      child = await startChild(dir, port)
      report.restartMs.push(performance.now() - restartAt)
      await call(child, `/watch?session=${session.sessionId}`)
    }

    // A clean stop in the middle of a feedback run loses nothing.
    const s = await attachAndRun(child, session, channels, 'feedback', previous?.runId)
    await new Promise((r) => setTimeout(r, 2_000))
    const made = await child.term()
    s.stop()
    child = await startChild(dir, port)
    const v = await call<Verify>(child, `/verify?run=${s.runId}`)
    const stopStatus = v.run?.status ?? 'missing'
    report.cleanStop = {
      made: made[session.sessionId] ?? -1,
      logged: v.decisionSamples.length,
      // A clean stop ends the run as interrupted (the operator did not stop it) but flushes everything.
      problems: checkSurvivors(v, { status: stopStatus === 'stopped' ? 'stopped' : 'interrupted', startSample: s.startSample, durableSample: s.lastAck?.durableSample ?? 0, decisionsMade: made[session.sessionId] }),
    }
    log(`clean SIGTERM: ${report.cleanStop.made} decisions made, ${report.cleanStop.logged} logged, run ${stopStatus}`)
  } finally {
    await child.term().catch(() => child.kill())
  }
  return report
}
