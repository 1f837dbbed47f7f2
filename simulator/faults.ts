// Faults a simulated device link can inject, so the server's handling of each can be shown
// and tested. Pure: which block gets which fault comes from a seeded stream; the live device
// applies the decision.
import type { RandomStream } from './random'

export const FAULT_KINDS = ['jitter', 'drop', 'reorder', 'duplicate', 'nan', 'wrong-channel-count', 'disconnect'] as const
export type FaultKind = (typeof FAULT_KINDS)[number]

export interface FaultSettings {
  /** Each block is sent up to this many milliseconds late (uniform). */
  jitterMs: number
  /** Probability per block of each fault. */
  dropRate: number
  reorderRate: number
  duplicateRate: number
  nanRate: number
  wrongChannelCountRate: number
  /** Drop the connection every this many seconds (0: never). */
  disconnectEverySeconds: number
  /** How long the link stays down after a disconnect before it reconnects. */
  reconnectDelayMs: number
}

export const NO_FAULTS: FaultSettings = {
  jitterMs: 0,
  dropRate: 0,
  reorderRate: 0,
  duplicateRate: 0,
  nanRate: 0,
  wrongChannelCountRate: 0,
  disconnectEverySeconds: 0,
  reconnectDelayMs: 1000,
}

export function validateFaultSettings(f: FaultSettings): void {
  for (const k of ['dropRate', 'reorderRate', 'duplicateRate', 'nanRate', 'wrongChannelCountRate'] as const) {
    if (!(Number.isFinite(f[k]) && f[k] >= 0 && f[k] <= 1)) throw new Error(`${k} must be a probability between 0 and 1, got ${f[k]}`)
  }
  for (const k of ['jitterMs', 'disconnectEverySeconds', 'reconnectDelayMs'] as const) {
    if (!(Number.isFinite(f[k]) && f[k] >= 0 && f[k] <= 3_600_000)) throw new Error(`${k} must be a non-negative number, got ${f[k]}`)
  }
}

export interface FaultLogEntry {
  /** Wall-clock time, ISO 8601. */
  at: string
  kind: FaultKind | 'server-close' | 'server-warning' | 'server-error' | 'reconnect' | 'behind'
  seq?: number
  firstSample?: number
  detail: string
}

/** What to do with one outgoing block. */
export interface BlockFaults {
  delayMs: number
  drop: boolean
  reorder: boolean
  duplicate: boolean
  nan: boolean
  wrongChannelCount: boolean
}

/**
 * Decides the faults of the next block. `forced` holds one-shot faults asked for by hand
 * (the bench's buttons); they apply to this block whatever the rates say.
 */
export function decideBlockFaults(settings: FaultSettings, random: RandomStream, forced: ReadonlySet<FaultKind>): BlockFaults {
  // Every draw happens for every block so one rate does not shift the others' sequence.
  const j = random.uniform()
  const d = random.uniform()
  const r = random.uniform()
  const u = random.uniform()
  const n = random.uniform()
  const w = random.uniform()
  return {
    delayMs: forced.has('jitter') ? Math.max(settings.jitterMs, 200) * j : settings.jitterMs * j,
    drop: forced.has('drop') || d < settings.dropRate,
    reorder: forced.has('reorder') || r < settings.reorderRate,
    duplicate: forced.has('duplicate') || u < settings.duplicateRate,
    nan: forced.has('nan') || n < settings.nanRate,
    wrongChannelCount: forced.has('wrong-channel-count') || w < settings.wrongChannelCountRate,
  }
}
