// The bench: simulated devices that a developer attaches to a session from the browser. Each
// is the simulator's live device (simulator/live-device.ts) hosted in the server process and
// connected to our own /ingest over a real WebSocket with a fresh device token, exactly as an
// amplifier bridge would be — the ingest cannot tell it from hardware.
//
// Running devices outlive a request, so they are kept in a registry on globalThis (keyed by
// a Symbol): in development the app modules are reloaded on every change, and a module-level
// map would lose track of devices that are still streaming.
import { and, asc, eq, inArray } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { montages, participants, protocols, sessions } from '~/db/schema'
import { createDeviceToken, revokeDeviceToken } from '~/live/tokens.server'
import { audit } from '~/server/audit.server'
import type { Config } from '~/server/config.server'
import type { SessionUser } from '~/server/services'
import type { BenchSettings } from '~/lib/bench-settings'
import { FAULT_KINDS, type FaultKind } from '../../simulator/faults'
import { startLiveDevice, type LiveDevice } from '../../simulator/live-device'

interface BenchDevice {
  sessionId: string
  labId: string
  device: LiveDevice
  tokenId: string
  settings: BenchSettings
  startedAt: string
  startedBy: string
  rateHz: number
  seed: number
}

const REGISTRY = Symbol.for('tiller.bench.devices')
function registry(): Map<string, BenchDevice> {
  const g = globalThis as unknown as { [REGISTRY]?: Map<string, BenchDevice> }
  return (g[REGISTRY] ??= new Map())
}

export class BenchError extends Error {}

const channelList = z
  .string()
  .default('')
  .transform((s) =>
    s
      .split(/[\s,;]+/)
      .map((x) => x.trim())
      .filter(Boolean),
  )
const probability = z.coerce.number().min(0, 'at least 0').max(1, 'at most 1')

export const benchSettingsSchema = z.object({
  skill: z.coerce.number().min(0, 'skill is 0 to 1').max(1, 'skill is 0 to 1'),
  blinksPerMinute: z.coerce.number().min(0).max(120),
  muscleBurstsPerMinute: z.coerce.number().min(0).max(120),
  mainsHz: z.coerce.number().refine((v) => v === 0 || v === 50 || v === 60, 'mains is 0, 50 or 60 Hz').transform((v) => v as 0 | 50 | 60),
  mainsUv: z.coerce.number().min(0).max(500),
  flatChannels: channelList,
  noisyChannels: channelList,
  jitterMs: z.coerce.number().min(0).max(5000),
  dropRate: probability,
  reorderRate: probability,
  duplicateRate: probability,
  nanRate: probability,
  disconnectEverySeconds: z.coerce.number().min(0).max(3600),
})

export const benchActionSchema = z.discriminatedUnion('intent', [
  benchSettingsSchema.extend({ intent: z.literal('start'), sessionId: z.string().uuid('Choose a session'), rateHz: z.coerce.number().int().refine((v) => [250, 500, 1000].includes(v), 'rate is 250, 500 or 1000 Hz'), seed: z.preprocess((v) => (v === '' || v === undefined ? undefined : v), z.coerce.number().int().min(0).max(2 ** 31 - 1).optional()) }),
  benchSettingsSchema.extend({ intent: z.literal('update'), sessionId: z.string().uuid() }),
  z.object({ intent: z.literal('stop'), sessionId: z.string().uuid() }),
  z.object({ intent: z.literal('inject'), sessionId: z.string().uuid(), kind: z.enum(FAULT_KINDS as unknown as [FaultKind, ...FaultKind[]]) }),
])
export type BenchAction = z.infer<typeof benchActionSchema>

/** Sessions a simulated device may join: planned or live ones of the lab. */
export async function benchSessions(db: Database, labId: string) {
  const rows = await db
    .select({ id: sessions.id, status: sessions.status, createdAt: sessions.createdAt, participant: participants.code, protocol: protocols.name, montage: montages.name })
    .from(sessions)
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .innerJoin(montages, eq(montages.id, sessions.montageId))
    .where(and(eq(sessions.labId, labId), inArray(sessions.status, ['planned', 'live'])))
    .orderBy(asc(sessions.createdAt))
  return rows.map((r) => ({ ...r, createdAt: r.createdAt.toISOString(), running: registry().has(r.id) }))
}

function ingestUrl(config: Config): string {
  const host = config.host === '0.0.0.0' || config.host === '::' || !config.host ? '127.0.0.1' : config.host
  return `ws://${host.includes(':') ? `[${host}]` : host}:${config.port}/ingest`
}

function toDeviceSettings(s: BenchSettings) {
  return {
    skill: s.skill,
    artifacts: { blinksPerMinute: s.blinksPerMinute, muscleBurstsPerMinute: s.muscleBurstsPerMinute, mainsHz: s.mainsHz, mainsUv: s.mainsUv, flatChannels: s.flatChannels, noisyChannels: s.noisyChannels },
    faults: { jitterMs: s.jitterMs, dropRate: s.dropRate, reorderRate: s.reorderRate, duplicateRate: s.duplicateRate, nanRate: s.nanRate, disconnectEverySeconds: s.disconnectEverySeconds },
  }
}

export async function startBenchDevice(db: Database, config: Config, user: SessionUser, input: { sessionId: string; rateHz: number; seed?: number; settings: BenchSettings }) {
  const previous = registry().get(input.sessionId)
  // A device the server closed for good (session ended, token revoked) is only a record now.
  if (previous && previous.device.state === 'stopped') registry().delete(input.sessionId)
  else if (previous) throw new BenchError('A simulated device is already attached to this session. Stop it first.')
  const [row] = await db
    .select({ session: sessions, montage: montages, protocol: protocols })
    .from(sessions)
    .innerJoin(montages, eq(montages.id, sessions.montageId))
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .where(and(eq(sessions.id, input.sessionId), eq(sessions.labId, user.labId)))
  if (!row) throw new BenchError('No such session in your lab.')
  if (row.session.status !== 'planned' && row.session.status !== 'live') throw new BenchError(`This session is ${row.session.status}: a device can only join a planned or live session.`)
  const unknown = [...input.settings.flatChannels, ...input.settings.noisyChannels].filter((c) => !row.montage.channels.some((m) => m.name === c))
  if (unknown.length) throw new BenchError(`Not in the montage: ${unknown.join(', ')}`)
  const token = await createDeviceToken(db, { labId: user.labId, sessionId: input.sessionId, createdBy: user.id, hours: 24 })
  const seed = input.seed ?? Math.floor(Math.random() * 2 ** 31)
  const { skill, artifacts, faults } = toDeviceSettings(input.settings)
  const device = startLiveDevice({
    url: ingestUrl(config),
    token: token.token,
    channels: row.montage.channels,
    rateHz: input.rateHz,
    classes: row.protocol.classes,
    seed,
    device: 'Tiller bench simulator',
    skill,
    artifacts,
    faults,
  })
  registry().set(input.sessionId, {
    sessionId: input.sessionId,
    labId: user.labId,
    device,
    tokenId: token.id,
    settings: input.settings,
    startedAt: new Date().toISOString(),
    startedBy: user.name,
    rateHz: input.rateHz,
    seed,
  })
  await audit(db, { labId: user.labId, actorId: user.id, action: 'bench.start', target: input.sessionId, detail: { rateHz: input.rateHz, seed, skill } })
}

function own(sessionId: string, user: SessionUser): BenchDevice {
  const entry = registry().get(sessionId)
  if (!entry || entry.labId !== user.labId) throw new BenchError('No simulated device is attached to this session.')
  return entry
}

export function updateBenchDevice(sessionId: string, user: SessionUser, settings: BenchSettings): void {
  const entry = own(sessionId, user)
  entry.device.update(toDeviceSettings(settings))
  entry.settings = settings
}

export function injectBenchFault(sessionId: string, user: SessionUser, kind: FaultKind): void {
  own(sessionId, user).device.inject(kind)
}

export async function stopBenchDevice(db: Database, sessionId: string, user: SessionUser): Promise<void> {
  const entry = own(sessionId, user)
  registry().delete(sessionId)
  await entry.device.stop().catch(() => undefined)
  await revokeDeviceToken(db, sessionId, entry.tokenId)
  await audit(db, { labId: user.labId, actorId: user.id, action: 'bench.stop', target: sessionId })
}

/** What the bench shows for a session: the device's state, counters and fault log. */
export function benchStatus(sessionId: string, labId: string) {
  const entry = registry().get(sessionId)
  if (!entry || entry.labId !== labId) return null
  const { device } = entry
  return {
    state: device.state,
    stats: { ...device.stats },
    channels: device.channels.length,
    rateHz: entry.rateHz,
    seed: entry.seed,
    startedAt: entry.startedAt,
    startedBy: entry.startedBy,
    settings: entry.settings,
    faultLog: device.faultLog().slice(-80).reverse(),
  }
}

/** Stops every bench device (server shutdown, tests). */
export async function stopAllBenchDevices(): Promise<void> {
  const all = [...registry().values()]
  registry().clear()
  await Promise.all(all.map((e) => e.device.stop().catch(() => undefined)))
}
