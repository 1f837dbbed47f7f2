// Seeded pseudo-random numbers for the simulator. Every random choice the simulator makes
// comes from one of these streams, so the same seed gives the same samples, cues and
// faults on every machine. sfc32 (Chris Doty-Humphrey's "small fast counting" generator,
// PractRand suite) seeded through splitmix32, a common practice for 32-bit state.

export interface RandomStream {
  /** Uniform in [0, 1). */
  uniform(): number
  /** Standard normal (mean 0, variance 1), Box–Muller (Box & Muller 1958, Ann. Math. Stat. 29:610). */
  gaussian(): number
  /** Integer in [0, n). */
  integer(n: number): number
  /** True with probability p. */
  chance(p: number): boolean
}

function splitmix32(seed: number): () => number {
  let state = seed >>> 0
  return () => {
    state = (state + 0x9e3779b9) >>> 0
    let z = state
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0
    return (z ^ (z >>> 16)) >>> 0
  }
}

/**
 * A stream for one purpose. `purpose` separates streams made from the same seed (noise,
 * participant choices, artifacts, faults) so that, for example, turning blinks on does not
 * change which trials the participant lapses on.
 */
export function createRandomStream(seed: number, purpose = 0): RandomStream {
  if (!Number.isFinite(seed)) throw new Error(`seed must be a finite number, got ${seed}`)
  const mix = splitmix32((Math.floor(seed) ^ Math.imul(purpose + 1, 0x27d4eb2d)) >>> 0)
  let a = mix()
  let b = mix()
  let c = mix()
  let d = mix()
  const next = (): number => {
    const t = (((a + b) >>> 0) + d) >>> 0
    d = (d + 1) >>> 0
    a = b ^ (b >>> 9)
    b = (c + (c << 3)) >>> 0
    c = (c << 21) | (c >>> 11)
    c = (c + t) >>> 0
    return t
  }
  for (let i = 0; i < 12; i++) next()

  const uniform = (): number => next() / 4294967296
  let spare = 0
  let hasSpare = false
  const gaussian = (): number => {
    if (hasSpare) {
      hasSpare = false
      return spare
    }
    let u = uniform()
    while (u <= 1e-12) u = uniform()
    const v = uniform()
    const radius = Math.sqrt(-2 * Math.log(u))
    const angle = 2 * Math.PI * v
    spare = radius * Math.sin(angle)
    hasSpare = true
    return radius * Math.cos(angle)
  }
  return {
    uniform,
    gaussian,
    integer: (n) => Math.floor(uniform() * n),
    chance: (p) => uniform() < p,
  }
}

/** Stream purposes, so every module asks for its own stream by name. */
export const StreamPurpose = {
  sensorNoise: 1,
  sourceNoise: 2,
  participant: 3,
  artifacts: 4,
  layout: 5,
  schedule: 6,
  faults: 7,
  muscleNoise: 8,
} as const
