// Tiller's one Node server: the React Router request handler, the built client assets (in
// production) or Vite in middleware mode (in development), the WebSocket ingest at /ingest,
// and a graceful shutdown that flushes the decision log before the database closes.
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http'
import { existsSync } from 'node:fs'
import { randomBytes } from 'node:crypto'
import type { Duplex } from 'node:stream'
import { createRequestListener } from '@react-router/node'
import type { ServerBuild } from 'react-router'
import sirv from 'sirv'
import { openDatabase } from './app/db/client.server.ts'
import { ConfigError, loadConfig } from './app/server/config.server.ts'
import { log, setLogLevel } from './app/server/log.server.ts'
import { createMailService } from './app/server/mail.server.ts'
import { isCrossSiteWrite, securityHeaders, setTrustedHeader } from './app/server/http-security.server.ts'
import type { Services } from './app/server/services.ts'
import { createLiveServices } from './app/live/index.server.ts'
import { sendRunSummary, startWeeklyDigestSchedule } from './app/server/reports.server.ts'

const NONCE_HEADER = 'x-tiller-csp-nonce'
const CLIENT_IP_HEADER = 'x-tiller-client-ip'

async function main() {
  let config
  try {
    config = loadConfig()
  } catch (error) {
    if (error instanceof ConfigError) {
      console.error(error.message)
      process.exit(1)
    }
    throw error
  }
  setLogLevel(config.logLevel)
  if (config.sessionSecretGenerated) {
    log('warn', 'config.session-secret-generated', {
      message: 'SESSION_SECRET is not set: using a random one, so everyone is signed out at each restart. Set SESSION_SECRET in production.',
    })
  }

  const database = await openDatabase(config.databaseLocation)
  await database.migrate()
  log('info', 'db.ready', { kind: database.kind, location: database.kind === 'pglite' ? config.databaseLocation : 'postgres' })

  const mail = await createMailService(config, database.db)
  if (mail.fakeSmtpPort) log('info', 'mail.local-outbox', { port: mail.fakeSmtpPort, message: 'SMTP_URL not set: e-mail goes to the outbox page' })

  const live = await createLiveServices({
    db: database.db,
    config,
    // The supervisors' run summary e-mail; it never throws, and decoding never waits for it.
    onRunEnded: (runId) => void sendRunSummary({ db: database.db, mail: mail.mailer, config }, runId),
  })

  const services: Services = { config, db: database.db, dbKind: database.kind, mail: mail.mailer, live }
  const digest = startWeeklyDigestSchedule(services)

  // The HTTP server exists before Vite so that Vite's HMR socket can share it.
  const server = createServer()
  const vite = config.production
    ? null
    : await import('vite').then((v) => v.createServer({ server: { middlewareMode: true, hmr: { server } }, appType: 'custom' }))

  const build: () => Promise<ServerBuild> = vite
    ? () => vite.ssrLoadModule('virtual:react-router/server-build') as Promise<ServerBuild>
    : await (async () => {
        const path = new URL('./build/server/index.js', import.meta.url)
        if (!existsSync(path)) {
          console.error('No production build found in build/. Run `npm run build` first.')
          process.exit(1)
        }
        const built = (await import(path.href)) as ServerBuild
        return () => Promise.resolve(built)
      })()

  const handleRequest = createRequestListener({
    build,
    mode: config.production ? 'production' : 'development',
    getLoadContext: (request) => ({ services, cspNonce: request.headers.get(NONCE_HEADER) ?? '' }) as never,
  })

  const assets = config.production
    ? sirv('build/client', {
        setHeaders(res, pathname) {
          if (pathname.startsWith('/assets/')) res.setHeader('Cache-Control', 'public, max-age=31536000, immutable')
        },
      })
    : null

  server.on('request', (req: IncomingMessage, res: ServerResponse) => {
    const nonce = randomBytes(16).toString('base64')
    // The handler builds its Fetch Request from rawHeaders; setTrustedHeader drops any copy the
    // client sent, so neither the nonce nor the address can be chosen by a client.
    setTrustedHeader(req, NONCE_HEADER, nonce)
    setTrustedHeader(req, CLIENT_IP_HEADER, req.socket.remoteAddress ?? '')
    for (const [name, value] of Object.entries(securityHeaders({ production: config.production, nonce }))) res.setHeader(name, value)

    if (isCrossSiteWrite(req, config)) {
      res.statusCode = 403
      res.setHeader('Content-Type', 'text/plain; charset=utf-8')
      res.end('Refused: this form was sent from another site (cross-site request).')
      return
    }
    const next = () =>
      Promise.resolve(handleRequest(req, res)).catch((error: unknown) => {
        log('error', 'http.unhandled', { url: req.url, error: String(error) })
        if (!res.headersSent) res.statusCode = 500
        res.end()
      })
    if (vite) vite.middlewares(req, res, next)
    else assets!(req, res, next)
  })

  server.on('upgrade', (req: IncomingMessage, socket: Duplex, head: Buffer) => {
    const path = (req.url ?? '').split('?')[0]
    if (path === '/ingest') {
      live.handleUpgrade(req, socket, head)
      return
    }
    // Leave every other upgrade (Vite's HMR socket in development) to its own listener.
    if (!vite) socket.destroy()
  })

  server.listen(config.port, config.host, () => {
    log('info', 'server.listening', { url: `http://${config.host}:${config.port}`, mode: config.production ? 'production' : 'development' })
  })

  let stopping = false
  const shutdown = async (signal: string) => {
    if (stopping) return
    stopping = true
    log('info', 'server.stopping', { signal })
    const forced = setTimeout(() => {
      log('error', 'server.stop-timeout', { message: 'shutdown took over 15 s; exiting' })
      process.exit(1)
    }, 15_000)
    forced.unref()
    server.close()
    server.closeAllConnections?.()
    try {
      digest.stop()
      await live.close()
      await mail.close()
      await vite?.close()
      await database.close()
      log('info', 'server.stopped', { signal })
      process.exit(0)
    } catch (error) {
      log('error', 'server.stop-failed', { error: String(error) })
      process.exit(1)
    }
  }
  process.on('SIGINT', () => void shutdown('SIGINT'))
  process.on('SIGTERM', () => void shutdown('SIGTERM'))
}

main().catch((error) => {
  console.error(error)
  process.exit(1)
})
