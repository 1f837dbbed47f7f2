// `npm run demo`: build if needed, migrate, seed the demo lab once, start the production server.
import { spawnSync, spawn } from 'node:child_process'
import { existsSync } from 'node:fs'

const run = (cmd, args, env = {}) => {
  const r = spawnSync(cmd, args, { stdio: 'inherit', env: { ...process.env, ...env } })
  if (r.status !== 0) process.exit(r.status ?? 1)
}
if (!existsSync('build/server/index.js')) run('npx', ['react-router', 'build'])
run('node', ['bin/tiller.js', 'demo'])
const port = process.env.PORT ?? '3000'
console.log(`\nTiller is starting on http://localhost:${port} — sign in with one of the accounts above.\n`)
const server = spawn('npx', ['tsx', 'server.ts'], { stdio: 'inherit', env: { NODE_ENV: 'production', ...process.env } })
for (const sig of ['SIGINT', 'SIGTERM']) process.on(sig, () => server.kill(sig))
server.on('exit', (code) => process.exit(code ?? 0))
