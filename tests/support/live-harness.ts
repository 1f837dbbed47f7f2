// The live services on an in-memory database behind a loopback HTTP server, with sessions
// ready to stream (16-channel montage, a trained decoder, a device token), and a paced device
// that streams like an amplifier bridge: blocks due by the wall clock, so timer jitter on a
// busy machine never looks like a slow sender.
import { createServer, type Server } from 'node:http'
import { eq } from 'drizzle-orm'
import { decoders, montages, participants, protocols, sessions } from '~/db/schema'
import { trainDecoder } from '~/engine/decoder'
import { simulateImagery } from '~/engine/synthetic'
import { createLiveServices, type LiveServicesImpl } from '~/live/index.server'
import type { LiveLimits } from '~/live/limits'
import { createDeviceToken } from '~/live/tokens.server'
import { createTestServices, type TestServices } from './services'

export { BLOCK, RATE_HZ, block, connect, pacedStream, type DeviceLink } from './device-link'
const RATE_HZ = 500

export interface LiveHarness {
  t: TestServices
  live: LiveServicesImpl
  server: Server
  url: string
  channels: string[]
  protocolId: string
  montageId: string
  participantId: string
  /** A planned session of the demo lab, with an active decoder and a device token. */
  newSession(options?: { decoder?: boolean }): Promise<{ sessionId: string; token: string; tokenId: string }>
  close(): Promise<void>
}

export async function startLiveHarness(port: number, limits: Partial<LiveLimits> = {}): Promise<LiveHarness> {
  const t = await createTestServices()
  const { db } = t.services
  const live = await createLiveServices({ db, config: t.services.config, limits: { workers: 1, ...limits }, log: () => undefined })
  t.services.live = live as never
  const [montage] = (await db.select().from(montages).where(eq(montages.labId, t.labId))).filter((m) => m.channels.length === 16)
  const channels = montage.channels.map((c) => c.name)
  const [participant] = await db.select().from(participants).where(eq(participants.code, 'HS-014'))
  // CSP + LDA on the engine's synthetic two-class recording, renamed to the montage's channels.
  const { recording, positions } = simulateImagery({ rows: 4, cols: 4, rateHz: RATE_HZ, trialsPerClass: 10, seed: 5 })
  recording.channels = channels
  const model = trainDecoder(recording, { method: 'csp', pairs: 2, windowSeconds: 1, positions: positions.map((p, i) => ({ ...p, name: channels[i] })) })
  const [protocol] = await db
    .insert(protocols)
    .values({ labId: t.labId, name: 'harness', classes: [...(model as unknown as { classes: string[] }).classes], trialsPerClass: 200, fixationSeconds: 1, cueSeconds: 0.5, imagerySeconds: 3, restSeconds: 1, restJitterSeconds: 0.5 })
    .returning()
  let version = 0

  const server = createServer((_req, res) => {
    res.statusCode = 404
    res.end()
  })
  server.on('upgrade', (req, socket, head) => {
    if ((req.url ?? '').split('?')[0] === '/ingest') live.handleUpgrade(req, socket, head)
    else socket.destroy()
  })
  await new Promise<void>((resolve) => server.listen(port, '127.0.0.1', resolve))

  return {
    t,
    live,
    server,
    url: `ws://127.0.0.1:${port}/ingest`,
    channels,
    protocolId: protocol.id,
    montageId: montage.id,
    participantId: participant.id,
    async newSession(options = {}) {
      const [session] = await db.insert(sessions).values({ labId: t.labId, participantId: participant.id, protocolId: protocol.id, montageId: montage.id }).returning()
      if (options.decoder !== false) {
        const [decoder] = await db
          .insert(decoders)
          .values({ labId: t.labId, participantId: participant.id, sessionId: session.id, version: ++version, method: 'csp', trainedOnRunIds: [], model: model as never })
          .returning()
        await live.activateDecoder(session.id, decoder.id, null)
      }
      const created = await createDeviceToken(db, { labId: t.labId, sessionId: session.id, createdBy: null, hours: 1 })
      return { sessionId: session.id, token: created.token, tokenId: created.id }
    },
    async close() {
      await live.close()
      await new Promise<void>((resolve) => server.close(() => resolve()))
      await t.close()
    },
  }
}

