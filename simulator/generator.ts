// The simulated participant: planted sources -> forward model -> electrodes, plus artifacts.
// Pure and deterministic: no clocks, no I/O. The caller asks for the next N samples and
// tells it about cues; the same seed, settings and cue sequence give the same samples
// whatever block sizes the caller uses (every random draw happens at a fixed sample).
//
// Hot path: per sample, a few resonators and pinking filters, then each active source adds
// its pattern (sources × channels multiply-adds) into a preallocated sample-major buffer.
import type { ChannelPosition } from '../app/engine/montage'
import { resolveChannels } from './channels'
import { designPinkingFilter, designResonator, type Resonator } from './noise-filters'
import {
  CLASS_AREAS,
  DEFAULT_PARTICIPANT,
  MOTOR_AREAS,
  decideTrial,
  validateParticipantSettings,
  type MotorArea,
  type ParticipantSettings,
  type TrialIntent,
} from './participant'
import { StreamPurpose, createRandomStream } from './random'
import { buildSourceLayout, type PlantedSource } from './source-layout'

export interface RhythmSettings {
  muHz: number
  betaHz: number
  alphaHz: number
  /** RMS of the mu rhythm at C3/C4/Cz from its own generator, µV. */
  muUv: number
  betaUv: number
  /** RMS of occipital alpha at O1/O2, µV. */
  alphaUv: number
  /** −3 dB width of each rhythm's spectral peak, Hz. */
  rhythmBandwidthHz: number
  /** RMS of the spatially correlated 1/f background over the head, µV. */
  backgroundUv: number
  /** RMS of each electrode's own 1/f noise, µV. */
  sensorNoiseUv: number
}

export const DEFAULT_RHYTHMS: RhythmSettings = {
  muHz: 11,
  betaHz: 22,
  alphaHz: 10,
  muUv: 8,
  betaUv: 3,
  alphaUv: 10,
  rhythmBandwidthHz: 3,
  backgroundUv: 6,
  sensorNoiseUv: 1.5,
}

export interface ArtifactSettings {
  blinksPerMinute: number
  /** Blink peak at Fpz, µV (typically 50–200 µV; common practice). */
  blinkUv: number
  eyeMovementsPerMinute: number
  /** Largest horizontal eye-movement step at F8, µV. */
  eyeMovementUv: number
  muscleBurstsPerMinute: number
  /** RMS of a muscle burst at T7/T8, µV. */
  muscleUv: number
  /** Electrode pops per minute over the whole montage. */
  popsPerMinute: number
  popUv: number
  /** Standard deviation of each electrode's slow drift, µV. */
  driftUv: number
  /** Mains frequency, 50 or 60 Hz (0: none). */
  mainsHz: 0 | 50 | 60
  /** Mean mains amplitude (sine peak) per electrode, µV. */
  mainsUv: number
  /** Channels that carry no signal at all (a broken lead). */
  flatChannels: string[]
  /** Channels with large broadband noise (a loose electrode). */
  noisyChannels: string[]
  noisyUv: number
}

export const DEFAULT_ARTIFACTS: ArtifactSettings = {
  blinksPerMinute: 12,
  blinkUv: 100,
  eyeMovementsPerMinute: 6,
  eyeMovementUv: 40,
  muscleBurstsPerMinute: 2,
  muscleUv: 20,
  popsPerMinute: 0.3,
  popUv: 150,
  driftUv: 10,
  mainsHz: 50,
  mainsUv: 4,
  flatChannels: [],
  noisyChannels: [],
  noisyUv: 40,
}

/** Everything off except the brain signals: for checks that want the rhythms alone. */
export const NO_ARTIFACTS: ArtifactSettings = {
  ...DEFAULT_ARTIFACTS,
  blinksPerMinute: 0,
  eyeMovementsPerMinute: 0,
  muscleBurstsPerMinute: 0,
  popsPerMinute: 0,
  driftUv: 0,
  mainsHz: 0,
  mainsUv: 0,
}

export interface SimulatorOptions {
  /** 10-10 names (or 10-5 half sites), or montage entries with unit-sphere positions. */
  channels: readonly (string | ChannelPosition)[]
  rateHz: number
  seed: number
  /** Classes the protocol uses; wrong-class lapses pick among them. Default left, right. */
  classes?: readonly string[]
  rhythms?: Partial<RhythmSettings>
  participant?: Partial<ParticipantSettings>
  artifacts?: Partial<ArtifactSettings>
  /** 'infinity' (ideal distant reference, default) or the montage's common average. */
  reference?: 'infinity' | 'average'
  /** Delay from cue to the start of the imagery (and from rest cue to its end), seconds. */
  reactionSeconds?: number
}

export type CuePhase = 'fixation' | 'cue' | 'imagery' | 'rest' | 'end'

export interface CueEvent {
  trial: number
  label: string
  phase: CuePhase
  /** Sample index (of this device's stream) at which the cue was shown. */
  atSample: number
  /** Run the trial belongs to; trial numbers restart in every run. */
  runId?: string
}

export interface SimulationTruth {
  channels: string[]
  rateHz: number
  seed: number
  reference: 'infinity' | 'average'
  rhythms: RhythmSettings
  participant: ParticipantSettings
  artifacts: ArtifactSettings
  /** Planted sources: location, orientation, moment per unit, and pattern on this montage. */
  sources: { name: string; kind: string; site: string | null; locationM: number[]; direction: number[]; momentNamPerUnit: number; pattern: number[] }[]
  /** Per class: the pattern (µV per unit at each channel) of the area its imagery desynchronises. */
  classPatterns: Record<string, number[]>
  /** What the participant did on each cue, with the ERD depth planted. */
  trials: TrialIntent[]
  /** Artifact events as they were planted. */
  artifactEvents: { sample: number; kind: string; detail: string }[]
}

export interface SimulatedParticipant {
  readonly channels: readonly ChannelPosition[]
  readonly channelCount: number
  readonly rateHz: number
  /** Index of the next sample generate() will produce. */
  readonly nextSample: number
  /**
   * The next `sampleCount` samples, sample-major (out[s * channelCount + c]), µV. Writes into
   * `out` when given (it must hold sampleCount × channelCount values) to avoid allocation.
   */
  generate(sampleCount: number, out?: Float32Array): Float32Array
  /** Tells the participant about a cue; applied at atSample (or now, if that has passed). */
  cue(event: CueEvent): void
  setParticipant(settings: Partial<ParticipantSettings>): void
  setArtifacts(settings: Partial<ArtifactSettings>): void
  truth(): SimulationTruth
}

interface PendingEvent {
  sample: number
  kind: 'start' | 'stop'
  trial: number
  /** run and trial, so a trial number reused by the next run is a new trial */
  key: string
  label: string
}

const ERD_TIME_CONSTANT_S = 0.25
const REBOUND_TIME_CONSTANT_S = 1.0
const POP_TIME_CONSTANT_S = 0.5
const DRIFT_KNOT_SECONDS = 0.5
const MAX_ARTIFACT_EVENTS_KEPT = 10_000

export function createSimulatedParticipant(options: SimulatorOptions): SimulatedParticipant {
  const channels = resolveChannels(options.channels)
  const rateHz = options.rateHz
  if (!(Number.isFinite(rateHz) && rateHz >= 32 && rateHz <= 20_000)) throw new Error(`sample rate must be 32..20000 Hz, got ${rateHz}`)
  const C = channels.length
  const reference = options.reference ?? 'infinity'
  const rhythms: RhythmSettings = { ...DEFAULT_RHYTHMS, ...options.rhythms }
  for (const [k, v] of Object.entries(rhythms)) if (!(Number.isFinite(v) && v >= 0)) throw new Error(`rhythm setting ${k} must be a non-negative number, got ${v}`)
  let participant: ParticipantSettings = { ...DEFAULT_PARTICIPANT, ...options.participant }
  validateParticipantSettings(participant)
  let artifacts: ArtifactSettings = { ...DEFAULT_ARTIFACTS, ...options.artifacts }
  const classSet = [...(options.classes ?? ['left', 'right'])]
  for (const c of classSet) if (!(c in CLASS_AREAS)) throw new Error(`class '${c}' is not one the simulated participant can imagine; use ${Object.keys(CLASS_AREAS).join(', ')}`)
  const reactionSamples = Math.round((options.reactionSeconds ?? 0.35) * rateHz)

  const layoutRandom = createRandomStream(options.seed, StreamPurpose.layout)
  const noise = createRandomStream(options.seed, StreamPurpose.sourceNoise)
  const sensorRandom = createRandomStream(options.seed, StreamPurpose.sensorNoise)
  const decisions = createRandomStream(options.seed, StreamPurpose.participant)
  const artifactRandom = createRandomStream(options.seed, StreamPurpose.artifacts)
  const muscleNoise = createRandomStream(options.seed, StreamPurpose.muscleNoise)

  const sources: PlantedSource[] = buildSourceLayout(channels, reference, layoutRandom)
  const K = sources.length
  // Leadfield, source-major: L[k * C + c].
  const L = new Float32Array(K * C)
  sources.forEach((s, k) => L.set(s.pattern, k * C))
  const sourceValues = new Float64Array(K)
  const index = (kind: string) => sources.map((s, i) => (s.kind === kind ? i : -1)).filter((i) => i >= 0)
  const motorIdx = index('motor')
  const alphaIdx = index('alpha')
  const backgroundIdx = index('background')
  const blinkIdx = index('blink')[0]
  const saccadeIdx = index('saccade')[0]
  const muscleIdx = index('muscle')
  const areaIndex = new Map<MotorArea, number>(MOTOR_AREAS.map((a, i) => [a.area, i]))

  // Rhythm generators: mu and beta per motor area, alpha per occipital source.
  if (rhythms.betaHz >= rateHz / 2 || rhythms.muHz >= rateHz / 2) throw new Error(`rate ${rateHz} Hz is too low for a ${rhythms.betaHz} Hz beta rhythm`)
  const mu = designResonator(rhythms.muHz, rhythms.rhythmBandwidthHz, rateHz)
  const beta = designResonator(rhythms.betaHz, rhythms.rhythmBandwidthHz * 2, rateHz)
  const alpha = designResonator(rhythms.alphaHz, rhythms.rhythmBandwidthHz, rateHz)
  const resonators: Resonator[] = [...motorIdx.flatMap(() => [mu, beta]), ...alphaIdx.map(() => alpha)]
  const resY1 = new Float64Array(resonators.length)
  const resY2 = new Float64Array(resonators.length)
  const resA1 = Float64Array.from(resonators, (r) => r.a1)
  const resA2 = Float64Array.from(resonators, (r) => r.a2)
  const resGain = Float64Array.from(resonators, (r) => r.gain)

  // Amplitude factors per motor area (1 = resting level), their targets and beta rebound.
  const areaCount = MOTOR_AREAS.length
  const muGain = new Float64Array(areaCount).fill(1)
  const betaGain = new Float64Array(areaCount).fill(1)
  const muTarget = new Float64Array(areaCount).fill(1)
  const rebound = new Float64Array(areaCount)
  const erdStep = 1 - Math.exp(-1 / (ERD_TIME_CONSTANT_S * rateHz))
  const reboundDecay = Math.exp(-1 / (REBOUND_TIME_CONSTANT_S * rateHz))

  // 1/f noise: one pinking filter state per background source and per electrode.
  const pink = designPinkingFilter(rateHz)
  const M = pink.poles.length
  const poles = pink.poles
  const zeros = pink.zeros
  const bgX = new Float64Array(backgroundIdx.length * M)
  const bgY = new Float64Array(backgroundIdx.length * M)
  const chX = new Float64Array(C * M)
  const chY = new Float64Array(C * M)
  /** One sample through the pinking cascade whose state starts at offset `o` of x and y. */
  const pinkStep = (input: number, x: Float64Array, y: Float64Array, o: number): number => {
    let v = input
    for (let m = 0; m < M; m++) {
      const out = v - zeros[m] * x[o + m] + poles[m] * y[o + m]
      x[o + m] = v
      y[o + m] = out
      v = out
    }
    return v
  }
  const backgroundScale = (rhythms.backgroundUv / Math.sqrt(backgroundIdx.length)) * pink.gain
  const sensorScale = rhythms.sensorNoiseUv * pink.gain

  // Per-electrode artifacts.
  const drift = new Float64Array(C)
  const driftTarget = new Float64Array(C)
  const driftSlope = new Float64Array(C)
  const driftKnot = Math.max(1, Math.round(DRIFT_KNOT_SECONDS * rateHz))
  const driftRho = 0.95
  const mainsGain = new Float64Array(C)
  for (let c = 0; c < C; c++) mainsGain[c] = 0.5 + artifactRandom.uniform() // impedance differs per electrode
  const pop = new Float64Array(C)
  const popDecay = Math.exp(-1 / (POP_TIME_CONSTANT_S * rateHz))
  let activePops = 0
  const channelIndex = new Map(channels.map((c, i) => [c.name, i]))
  let flat = new Uint8Array(C)
  let noisy = new Uint8Array(C)
  const applyBadChannels = () => {
    flat = new Uint8Array(C)
    noisy = new Uint8Array(C)
    for (const [list, mask] of [
      [artifacts.flatChannels, 'flat'],
      [artifacts.noisyChannels, 'noisy'],
    ] as const) {
      for (const name of list) {
        const i = channelIndex.get(name)
        if (i === undefined) throw new Error(`${mask} channel '${name}' is not in the montage`)
        ;(mask === 'flat' ? flat : noisy)[i] = 1
      }
    }
  }
  const validateArtifacts = (a: ArtifactSettings) => {
    if (a.mainsHz !== 0 && a.mainsHz !== 50 && a.mainsHz !== 60) throw new Error(`mains frequency must be 50 or 60 Hz (or 0 for none), got ${a.mainsHz}`)
    if (a.mainsHz !== 0 && a.mainsHz >= rateHz / 2) throw new Error(`rate ${rateHz} Hz cannot represent ${a.mainsHz} Hz mains`)
    for (const [k, v] of Object.entries(a)) if (typeof v === 'number' && !(Number.isFinite(v) && v >= 0)) throw new Error(`artifact setting ${k} must be a non-negative number, got ${v}`)
  }
  validateArtifacts(artifacts)
  applyBadChannels()

  // Transient artifacts: next onset sample of each kind (exponential waiting times).
  const waitSamples = (perMinute: number) => (perMinute > 0 ? Math.max(1, Math.round((-Math.log(1 - artifactRandom.uniform()) * 60 * rateHz) / perMinute)) : Infinity)
  let sample = 0
  let nextBlink = waitSamples(artifacts.blinksPerMinute)
  let nextSaccade = waitSamples(artifacts.eyeMovementsPerMinute)
  let nextMuscle = waitSamples(artifacts.muscleBurstsPerMinute)
  let nextPop = waitSamples(artifacts.popsPerMinute)
  let blinkStart = -1
  const blinkRise = 0.1 * rateHz
  let gaze = 0
  let gazeTarget = 0
  let gazeReturn = Infinity
  const gazeStep = 1 - Math.exp(-1 / (0.02 * rateHz))
  const muscleStart = new Float64Array(muscleIdx.length).fill(-1)
  const muscleLength = new Float64Array(muscleIdx.length)
  const muscleLevel = new Float64Array(muscleIdx.length)
  const musclePrev = new Float64Array(muscleIdx.length)
  const artifactEvents: SimulationTruth['artifactEvents'] = []
  const logArtifact = (kind: string, detail: string) => {
    if (artifactEvents.length < MAX_ARTIFACT_EVENTS_KEPT) artifactEvents.push({ sample, kind, detail })
  }

  // Cues and the participant's answers.
  const pending: PendingEvent[] = []
  const trials: TrialIntent[] = []
  let active: { intent: TrialIntent; areas: number[] } | null = null
  const startedTrials = new Set<string>()

  const schedule = (event: PendingEvent) => {
    let i = pending.length
    while (i > 0 && pending[i - 1].sample > event.sample) i--
    pending.splice(i, 0, event)
  }

  const areasFor = (performed: string | null): { area: number; share: number }[] => {
    if (!performed) return []
    const map = CLASS_AREAS[performed]
    const out: { area: number; share: number }[] = []
    if (map?.contralateral) out.push({ area: areaIndex.get(map.contralateral)!, share: 1 })
    if (map?.ipsilateral) out.push({ area: areaIndex.get(map.ipsilateral)!, share: participant.ipsilateralShare })
    return out
  }

  const stopTask = () => {
    if (!active) return
    for (let a = 0; a < areaCount; a++) muTarget[a] = 1
    // Beta rebound scales with how strongly the area took part.
    for (const { area, share } of areasFor(active.intent.performed)) {
      rebound[area] = participant.betaRebound * share * (active.intent.depth / Math.max(participant.erdDepth, 1e-9))
    }
    active = null
  }

  const handleEvent = (event: PendingEvent) => {
    if (event.kind === 'stop') {
      stopTask()
      return
    }
    if (startedTrials.has(event.key)) return
    startedTrials.add(event.key)
    stopTask()
    const intent = decideTrial(participant, decisions, event.trial, event.label, classSet, sample / rateHz, sample)
    trials.push(intent)
    const areas = areasFor(intent.performed)
    for (const { area, share } of areas) {
      muTarget[area] = Math.sqrt(Math.max(0, 1 - intent.depth * share))
      rebound[area] = 0
    }
    active = { intent, areas: areas.map((a) => a.area) }
  }

  const generate = (sampleCount: number, out?: Float32Array): Float32Array => {
    if (!Number.isInteger(sampleCount) || sampleCount < 0) throw new Error(`sample count must be a non-negative integer, got ${sampleCount}`)
    const buffer = out ?? new Float32Array(sampleCount * C)
    if (buffer.length < sampleCount * C) throw new Error(`output buffer holds ${buffer.length} values; ${sampleCount * C} needed`)
    const mainsOmega = (2 * Math.PI * artifacts.mainsHz) / rateHz
    const mainsAmp = artifacts.mainsHz > 0 ? artifacts.mainsUv : 0
    const thirdHarmonic = 3 * artifacts.mainsHz < rateHz / 2 ? 0.2 : 0
    const integerRate = Number.isInteger(rateHz)
    const driftSigma = artifacts.driftUv * Math.sqrt(1 - driftRho * driftRho)
    const anyNoisy = noisy.some((v) => v === 1)
    const anyFlat = flat.some((v) => v === 1)

    for (let s = 0; s < sampleCount; s++) {
      while (pending.length > 0 && pending[0].sample <= sample) handleEvent(pending.shift()!)

      // Motor rhythms with their ERD gains.
      for (let a = 0; a < areaCount; a++) {
        rebound[a] *= reboundDecay
        muGain[a] += (muTarget[a] - muGain[a]) * erdStep
        const betaTarget = muTarget[a] * Math.sqrt(1 + rebound[a])
        betaGain[a] += (betaTarget - betaGain[a]) * erdStep
      }
      for (let r = 0; r < resonators.length; r++) {
        const y = resA1[r] * resY1[r] + resA2[r] * resY2[r] + resGain[r] * noise.gaussian()
        resY2[r] = resY1[r]
        resY1[r] = y
      }
      for (let a = 0; a < motorIdx.length; a++) {
        sourceValues[motorIdx[a]] = rhythms.muUv * muGain[a] * resY1[2 * a] + rhythms.betaUv * betaGain[a] * resY1[2 * a + 1]
      }
      for (let i = 0; i < alphaIdx.length; i++) sourceValues[alphaIdx[i]] = rhythms.alphaUv * resY1[2 * motorIdx.length + i]
      for (let i = 0; i < backgroundIdx.length; i++) {
        sourceValues[backgroundIdx[i]] = backgroundScale * pinkStep(noise.gaussian(), bgX, bgY, i * M)
      }

      // Eye and muscle artifacts.
      if (sample >= nextBlink) {
        blinkStart = sample
        nextBlink = sample + waitSamples(artifacts.blinksPerMinute)
        logArtifact('blink', '')
      }
      if (blinkStart >= 0) {
        const t = (sample - blinkStart) / blinkRise
        // Gamma-shaped lid movement peaking 100 ms after onset, back to baseline in ~0.5 s.
        const v = t * t * Math.exp(2 * (1 - t))
        sourceValues[blinkIdx] = artifacts.blinkUv * v
        if (t > 6) blinkStart = -1
      } else sourceValues[blinkIdx] = 0
      if (sample >= nextSaccade) {
        gazeTarget = (artifactRandom.uniform() * 2 - 1) * artifacts.eyeMovementUv
        gazeReturn = sample + Math.round((0.5 + artifactRandom.uniform() * 1.5) * rateHz)
        nextSaccade = sample + waitSamples(artifacts.eyeMovementsPerMinute)
        logArtifact('eye movement', `${gazeTarget.toFixed(1)} uV at F8`)
      }
      if (sample >= gazeReturn) {
        gazeTarget = 0
        gazeReturn = Infinity
      }
      gaze += (gazeTarget - gaze) * gazeStep
      sourceValues[saccadeIdx] = Math.abs(gaze) < 1e-3 ? 0 : gaze
      if (sample >= nextMuscle) {
        const side = artifactRandom.integer(3) // left, right or both (jaw clench)
        const length = Math.round((0.3 + artifactRandom.uniform() * 1.2) * rateHz)
        const level = artifacts.muscleUv * (0.5 + artifactRandom.uniform())
        for (let i = 0; i < muscleIdx.length; i++) {
          if (side === 2 || side === i) {
            muscleStart[i] = sample
            muscleLength[i] = length
            muscleLevel[i] = level
          }
        }
        nextMuscle = sample + waitSamples(artifacts.muscleBurstsPerMinute)
        logArtifact('muscle', ['left', 'right', 'both'][side])
      }
      for (let i = 0; i < muscleIdx.length; i++) {
        if (muscleStart[i] < 0) {
          sourceValues[muscleIdx[i]] = 0
          continue
        }
        const t = (sample - muscleStart[i]) / muscleLength[i]
        if (t >= 1) {
          muscleStart[i] = -1
          sourceValues[muscleIdx[i]] = 0
          continue
        }
        // First difference of white noise: power rising with frequency, like EMG over EEG.
        const w = muscleNoise.gaussian()
        const envelope = 0.5 - 0.5 * Math.cos(2 * Math.PI * t)
        sourceValues[muscleIdx[i]] = muscleLevel[i] * envelope * (w - musclePrev[i]) * Math.SQRT1_2
        musclePrev[i] = w
      }

      // Per-electrode terms: own 1/f noise, drift, mains, pops.
      if (sample % driftKnot === 0) {
        for (let c = 0; c < C; c++) {
          driftTarget[c] = driftRho * driftTarget[c] + driftSigma * artifactRandom.gaussian()
          driftSlope[c] = (driftTarget[c] - drift[c]) / driftKnot
        }
      }
      if (sample >= nextPop) {
        const c = artifactRandom.integer(C)
        const sign = artifactRandom.chance(0.5) ? 1 : -1
        pop[c] += sign * artifacts.popUv * (0.5 + artifactRandom.uniform())
        activePops++
        nextPop = sample + waitSamples(artifacts.popsPerMinute)
        logArtifact('electrode pop', channels[c].name)
      }
      let mains = 0
      if (mainsAmp > 0) {
        // Phase from the sample index modulo one second keeps the frequency exact for hours.
        const n = integerRate ? sample % rateHz : sample
        mains = mainsAmp * (Math.sin(mainsOmega * n) + thirdHarmonic * Math.sin(3 * mainsOmega * n))
      }
      const base = s * C
      for (let c = 0; c < C; c++) {
        drift[c] += driftSlope[c]
        buffer[base + c] = sensorScale * pinkStep(sensorRandom.gaussian(), chX, chY, c * M) + drift[c] + mainsGain[c] * mains
      }
      if (activePops > 0) {
        activePops = 0
        for (let c = 0; c < C; c++) {
          if (pop[c] === 0) continue
          buffer[base + c] += pop[c]
          pop[c] *= popDecay
          if (Math.abs(pop[c]) < 0.05) pop[c] = 0
          else activePops++
        }
      }

      // Project the sources through the leadfield.
      for (let k = 0; k < K; k++) {
        const v = sourceValues[k]
        if (v === 0) continue
        const o = k * C
        for (let c = 0; c < C; c++) buffer[base + c] += L[o + c] * v
      }
      if (anyNoisy) for (let c = 0; c < C; c++) if (noisy[c]) buffer[base + c] += artifacts.noisyUv * artifactRandom.gaussian()
      if (anyFlat) for (let c = 0; c < C; c++) if (flat[c]) buffer[base + c] = 0
      sample++
    }
    return buffer
  }

  const classPatterns = (): Record<string, number[]> => {
    const out: Record<string, number[]> = {}
    for (const c of classSet) {
      const area = CLASS_AREAS[c]?.contralateral
      if (!area) continue
      out[c] = Array.from(sources[motorIdx[areaIndex.get(area)!]].pattern)
    }
    return out
  }

  return {
    channels,
    channelCount: C,
    rateHz,
    get nextSample() {
      return sample
    },
    generate,
    cue(event) {
      const at = Math.max(event.atSample, sample)
      const key = `${event.runId ?? ''}:${event.trial}`
      if (event.phase === 'cue' || event.phase === 'imagery') {
        if (!startedTrials.has(key)) schedule({ sample: at + reactionSamples, kind: 'start', trial: event.trial, key, label: event.label })
      } else {
        // Fixation, rest or the end of the run: whatever the participant was imagining stops.
        schedule({ sample: at + reactionSamples, kind: 'stop', trial: -1, key, label: event.label })
      }
    },
    setParticipant(settings) {
      const next = { ...participant, ...settings }
      validateParticipantSettings(next)
      participant = next
    },
    setArtifacts(settings) {
      const next = { ...artifacts, ...settings }
      validateArtifacts(next)
      const previous = artifacts
      artifacts = next
      try {
        applyBadChannels()
      } catch (error) {
        artifacts = previous
        applyBadChannels()
        throw error
      }
      // New rates apply from the next event on; a rate switched on starts its clock now.
      if (previous.blinksPerMinute !== next.blinksPerMinute) nextBlink = sample + waitSamples(next.blinksPerMinute)
      if (previous.eyeMovementsPerMinute !== next.eyeMovementsPerMinute) nextSaccade = sample + waitSamples(next.eyeMovementsPerMinute)
      if (previous.muscleBurstsPerMinute !== next.muscleBurstsPerMinute) nextMuscle = sample + waitSamples(next.muscleBurstsPerMinute)
      if (previous.popsPerMinute !== next.popsPerMinute) nextPop = sample + waitSamples(next.popsPerMinute)
    },
    truth() {
      return {
        channels: channels.map((c) => c.name),
        rateHz,
        seed: options.seed,
        reference,
        rhythms,
        participant,
        artifacts,
        sources: sources.map((s) => ({
          name: s.name,
          kind: s.kind,
          site: s.site,
          locationM: [s.locationM.x, s.locationM.y, s.locationM.z],
          direction: [s.direction.x, s.direction.y, s.direction.z],
          momentNamPerUnit: s.momentNamPerUnit,
          pattern: Array.from(s.pattern),
        })),
        classPatterns: classPatterns(),
        trials: trials.map((t) => ({ ...t })),
        artifactEvents: artifactEvents.map((e) => ({ ...e })),
      }
    },
  }
}
