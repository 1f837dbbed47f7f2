// Cue schedules for calibration and feedback runs: every class equally often, in a seeded
// random order with no more than three identical cues in a row, each trial with a jittered
// rest (inter-trial interval). Pure: the seed is stored with the run so the order can be
// reproduced.

export interface ProtocolTiming {
  classes: string[]
  trialsPerClass: number
  fixationSeconds: number
  cueSeconds: number
  imagerySeconds: number
  restSeconds: number
  restJitterSeconds: number
}

export interface ScheduledTrial {
  index: number
  label: string
  /** Phase lengths in samples: fixation, cue, imagery, rest (rest includes the jitter). */
  fixation: number
  cue: number
  imagery: number
  rest: number
}

const MAX_REPEAT = 3

/** mulberry32: a small, well-known 32-bit PRNG; enough for cue order, not for secrets. */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

function longestRun(labels: string[]): number {
  let best = 0
  let run = 0
  for (let i = 0; i < labels.length; i++) {
    run = i > 0 && labels[i] === labels[i - 1] ? run + 1 : 1
    best = Math.max(best, run)
  }
  return best
}

/** Balanced labels in random order; reshuffles until no label repeats more than three times in a row. */
export function balancedOrder(classes: string[], trialsPerClass: number, random: () => number): string[] {
  if (classes.length === 0) throw new Error('a protocol needs at least one class')
  if (!Number.isInteger(trialsPerClass) || trialsPerClass < 1) throw new Error(`trials per class must be a positive integer, got ${trialsPerClass}`)
  const labels = classes.flatMap((c) => Array.from({ length: trialsPerClass }, () => c))
  for (let attempt = 0; attempt < 1000; attempt++) {
    for (let i = labels.length - 1; i > 0; i--) {
      const j = Math.floor(random() * (i + 1))
      ;[labels[i], labels[j]] = [labels[j], labels[i]]
    }
    if (classes.length === 1 || longestRun(labels) <= MAX_REPEAT) return labels
  }
  return labels
}

export function buildSchedule(timing: ProtocolTiming, rateHz: number, seed: number): ScheduledTrial[] {
  const random = seededRandom(seed)
  const toSamples = (seconds: number) => Math.max(1, Math.round(seconds * rateHz))
  return balancedOrder(timing.classes, timing.trialsPerClass, random).map((label, index) => ({
    index,
    label,
    fixation: toSamples(timing.fixationSeconds),
    cue: toSamples(timing.cueSeconds),
    imagery: toSamples(timing.imagerySeconds),
    rest: toSamples(timing.restSeconds + random() * timing.restJitterSeconds),
  }))
}
