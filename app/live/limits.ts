// Tunable limits of the live path. Defaults are what docs/ingest-protocol.md promises; tests
// shorten the timers so that every close can be provoked in seconds.
import { availableParallelism } from 'node:os'

export interface LiveLimits {
  /** A device link must send a valid hello within this time (close 4000). */
  helloTimeoutMs: number
  /** After the welcome, no sample block for this long closes the link (4439). */
  idleTimeoutMs: number
  /** Window over which a link's sample rate is compared with its declared rate. */
  slowWindowMs: number
  /** Below this fraction of the declared rate over a whole window: close 4439. */
  slowFraction: number
  /** Token bucket for frames: sustained frames per second and burst (4437). */
  maxFramesPerSecond: number
  frameBurst: number
  /** Samples may run ahead of the wall clock by at most this many seconds (catch-up after a reconnect) (4437). */
  maxAheadSeconds: number
  /** Frames above this are cut by the WebSocket layer itself (1009); between MAX_FRAME_BYTES and it, 4431. */
  hardMaxPayloadBytes: number
  /** A link silent for this long may be replaced by a new one for the same session. */
  staleLinkMs: number
  /** WebSocket ping interval; a link missing two pongs is dropped. */
  pingIntervalMs: number
  /** Decision log and recording flush interval: the longest stretch of data not yet durable. */
  flushIntervalMs: number
  /** Events kept per stream for Last-Event-ID resume. */
  sseRingSize: number
  /** Bytes of events kept per stream for resume (signal frames are large). */
  sseRingBytes: number
  /** A session with no device link, no run in progress and no viewer is unloaded after this long. */
  idleSessionMs: number
  /** Events queued per slow client before display frames are dropped. */
  sseClientQueue: number
  /** Displayed signal rate and how often signal frames are sent. */
  displayRateHz: number
  displayIntervalMs: number
  /** Decoding worker threads; each hosts many session pipelines. */
  workers: number
  /** Frames accepted while the hello is being checked against the database. */
  maxFramesBeforeWelcome: number
}

export const DEFAULT_LIMITS: LiveLimits = {
  helloTimeoutMs: 5_000,
  idleTimeoutMs: 10_000,
  slowWindowMs: 10_000,
  slowFraction: 0.5,
  maxFramesPerSecond: 1_000,
  frameBurst: 2_000,
  maxAheadSeconds: 30,
  hardMaxPayloadBytes: 4 * 1024 * 1024,
  staleLinkMs: 3_000,
  pingIntervalMs: 5_000,
  flushIntervalMs: 50,
  sseRingSize: 4_096,
  sseRingBytes: 1024 * 1024,
  idleSessionMs: 10 * 60_000,
  sseClientQueue: 1_024,
  displayRateHz: 125,
  displayIntervalMs: 100,
  workers: Math.max(1, Math.min(4, availableParallelism())),
  maxFramesBeforeWelcome: 256,
}

export function resolveLimits(overrides: Partial<LiveLimits> = {}): LiveLimits {
  return { ...DEFAULT_LIMITS, ...overrides }
}
