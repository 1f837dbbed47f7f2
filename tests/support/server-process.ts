// Starts the real server.ts as a child process on loopback, as a lab would run it, for tests
// that must see what a browser or a device link sees: headers, CSRF refusals, error pages,
// crashes and restarts. Every start is bounded in time; stop() always ends the process.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process'
import { existsSync, mkdirSync, readdirSync, rmSync, statSync } from 'node:fs'
import { join, resolve } from 'node:path'

export const ROOT = resolve(import.meta.dirname, '..', '..')

export interface ServerProcess {
  port: number
  url: string
  dataDir: string
  proc: ChildProcess
  /** Everything the server wrote (stdout and stderr), for log assertions. */
  output(): string
  /** SIGTERM, wait for exit (bounded), then SIGKILL if it is still there. Returns the exit code. */
  stop(timeoutMs?: number): Promise<number | null>
  /** SIGKILL at once: the crash case. */
  kill(): Promise<void>
}

export interface StartOptions {
  port: number
  dataDir: string
  production?: boolean
  env?: Record<string, string>
  /** Seed the demo lab with `tiller demo` before starting (only when the directory is new). */
  seedDemo?: boolean
  /** Remove the data directory first. */
  fresh?: boolean
  startTimeoutMs?: number
}

function newestMtime(dir: string): number {
  let newest = 0
  for (const name of readdirSync(dir)) {
    const path = join(dir, name)
    const s = statSync(path)
    newest = Math.max(newest, s.isDirectory() ? newestMtime(path) : s.mtimeMs)
  }
  return newest
}

/**
 * Makes sure build/ holds a production build no older than app/. Builds (about 3-10 s) only
 * when needed; a lock keeps two of our own test files from building at once.
 */
export function ensureProductionBuild(): void {
  const serverBuild = join(ROOT, 'build/server/index.js')
  if (existsSync(serverBuild) && statSync(serverBuild).mtimeMs >= newestMtime(join(ROOT, 'app'))) return
  const r = spawnSync('flock', ['/tmp/tiller-build.lock', 'npx', 'react-router', 'build'], { cwd: ROOT, encoding: 'utf8', timeout: 180_000 })
  if (r.status !== 0) throw new Error(`react-router build failed:\n${r.stdout}\n${r.stderr}`)
}

export function seedDemoInto(dataDir: string, env: Record<string, string> = {}): void {
  const r = spawnSync('node', ['bin/tiller.js', 'demo', '--no-sessions'], {
    cwd: ROOT,
    encoding: 'utf8',
    timeout: 60_000,
    env: { ...process.env, TILLER_DATA_DIR: dataDir, DATABASE_URL: '', ...env },
  })
  if (r.status !== 0) throw new Error(`tiller demo failed:\n${r.stdout}\n${r.stderr}`)
}

async function waitForHealth(url: string, proc: ChildProcess, timeoutMs: number, output: () => string): Promise<void> {
  const deadline = Date.now() + timeoutMs
  while (Date.now() < deadline) {
    if (proc.exitCode !== null) throw new Error(`server exited with ${proc.exitCode} before it was healthy:\n${output()}`)
    try {
      const res = await fetch(`${url}/healthz`, { signal: AbortSignal.timeout(2_000) })
      if (res.ok) return
    } catch {
      // not listening yet
    }
    await new Promise((r) => setTimeout(r, 150))
  }
  proc.kill('SIGKILL')
  throw new Error(`server not healthy within ${timeoutMs} ms:\n${output()}`)
}

export async function startServer(options: StartOptions): Promise<ServerProcess> {
  try {
    return await startServerOnce(options)
  } catch (error) {
    // Another process may be rebuilding build/ at this moment (npm test and the e2e step both
    // build): wait for a complete build and try once more.
    if (!/No production build|Cannot find module|ERR_MODULE_NOT_FOUND/.test(String(error))) throw error
    await new Promise((r) => setTimeout(r, 3_000))
    return startServerOnce({ ...options, fresh: false })
  }
}

async function startServerOnce(options: StartOptions): Promise<ServerProcess> {
  const { port } = options
  if (port < 4600 || port > 4699) throw new Error(`port ${port} is outside this suite's range 4600-4699`)
  const dataDir = resolve(ROOT, options.dataDir)
  if (options.fresh) rmSync(dataDir, { recursive: true, force: true })
  mkdirSync(resolve(dataDir, '..'), { recursive: true })
  if (options.seedDemo && !existsSync(dataDir)) seedDemoInto(dataDir, options.env)
  const production = options.production ?? true
  if (production) ensureProductionBuild()
  const url = `http://127.0.0.1:${port}`
  const env = {
    ...process.env,
    NODE_ENV: production ? 'production' : 'development',
    HOST: '127.0.0.1',
    PORT: String(port),
    TILLER_DATA_DIR: dataDir,
    DATABASE_URL: '',
    SESSION_SECRET: 'server-process-secret-server-process-secret',
    PUBLIC_URL: url,
    LOG_LEVEL: 'info',
    ...options.env,
  }
  // Node directly on tsx's loader (not `npx tsx`): the pid is the server's own, so SIGKILL hits it.
  const proc = spawn(process.execPath, ['--import', 'tsx', 'server.ts'], { cwd: ROOT, env, stdio: ['ignore', 'pipe', 'pipe'] })
  let out = ''
  const append = (chunk: Buffer) => {
    out += chunk.toString()
    if (out.length > 2_000_000) out = out.slice(-1_000_000)
  }
  proc.stdout!.on('data', append)
  proc.stderr!.on('data', append)
  const output = () => out
  const exited = new Promise<number | null>((resolve) => proc.once('exit', (code) => resolve(code)))
  await waitForHealth(url, proc, options.startTimeoutMs ?? 60_000, output)
  return {
    port,
    url,
    dataDir,
    proc,
    output,
    async stop(timeoutMs = 20_000) {
      if (proc.exitCode !== null || proc.signalCode !== null) return proc.exitCode
      proc.kill('SIGTERM')
      const timer = setTimeout(() => proc.kill('SIGKILL'), timeoutMs)
      const code = await exited
      clearTimeout(timer)
      return code
    },
    async kill() {
      if (proc.exitCode !== null || proc.signalCode !== null) return
      proc.kill('SIGKILL')
      await exited
    },
  }
}

/** Signs in through the real sign-in form and returns the session cookie (name=value). */
export async function signInOver(url: string, email: string, password: string): Promise<string> {
  const res = await fetch(`${url}/sign-in`, {
    method: 'POST',
    redirect: 'manual',
    headers: { Origin: url, 'Content-Type': 'application/x-www-form-urlencoded' },
    body: new URLSearchParams({ email, password }),
  })
  const setCookie = res.headers.get('set-cookie')
  if (res.status !== 302 || !setCookie) throw new Error(`sign-in as ${email} failed: ${res.status} ${await res.text()}`)
  return setCookie.split(';')[0]
}
