// What a developer can set on a bench device: shared by the bench screen and app/server/bench.server.ts.
export interface BenchSettings {
  skill: number
  blinksPerMinute: number
  muscleBurstsPerMinute: number
  mainsHz: 0 | 50 | 60
  mainsUv: number
  flatChannels: string[]
  noisyChannels: string[]
  jitterMs: number
  dropRate: number
  reorderRate: number
  duplicateRate: number
  nanRate: number
  disconnectEverySeconds: number
}

export const DEFAULT_BENCH_SETTINGS: BenchSettings = {
  skill: 0.8,
  blinksPerMinute: 12,
  muscleBurstsPerMinute: 2,
  mainsHz: 50,
  mainsUv: 4,
  flatChannels: [],
  noisyChannels: [],
  jitterMs: 0,
  dropRate: 0,
  reorderRate: 0,
  duplicateRate: 0,
  nanRate: 0,
  disconnectEverySeconds: 0,
}
