// The participant model: what the simulated person does with each cue. Pure decisions from a
// seeded stream; the generator turns them into rhythm gains.
//
// Motor imagery of one hand lowers mu/beta power over the opposite hemisphere (event-related
// desynchronisation, ERD), feet imagery over the midline, and beta power overshoots after
// the imagery ends (post-movement beta rebound) — Pfurtscheller & Lopes da Silva 1999, Clin.
// Neurophysiol. 110:1842. A typical ERD depth is 20–40 % of band power (common practice).
import type { RandomStream } from './random'

/** Sensorimotor areas with a planted mu/beta generator, and the site each sits beneath. */
export const MOTOR_AREAS = [
  { area: 'left-hand', site: 'C3' },
  { area: 'right-hand', site: 'C4' },
  { area: 'feet', site: 'Cz' },
] as const
export type MotorArea = (typeof MOTOR_AREAS)[number]['area']

/** Class names the participant understands, and the area whose rhythm each imagery lowers. */
export const CLASS_AREAS: Readonly<Record<string, { contralateral?: MotorArea; ipsilateral?: MotorArea }>> = {
  left: { contralateral: 'right-hand', ipsilateral: 'left-hand' },
  right: { contralateral: 'left-hand', ipsilateral: 'right-hand' },
  feet: { contralateral: 'feet' },
  // Resting is a class in some protocols: no imagery, so no ERD anywhere.
  rest: {},
}
export const KNOWN_CLASSES = ['left', 'right', 'feet', 'rest'] as const

export interface ParticipantSettings {
  /** 0..1: the share of trials performed as cued (the rest are lapses). */
  skill: number
  /** Fraction of mu/beta band power lost over the contralateral area during imagery. */
  erdDepth: number
  /** ERD over the ipsilateral hand area, as a share of the contralateral depth. */
  ipsilateralShare: number
  /** Fractional increase of beta power after the imagery ends (beta rebound). */
  betaRebound: number
  /** Of the lapses, the share spent imagining a wrong class (the rest: no response). */
  wrongClassShare: number
  /** Fraction of the ERD depth lost per hour of session (fatigue). */
  fatiguePerHour: number
  /** Trial-to-trial spread of the ERD depth (standard deviation of a log-normal factor). */
  depthSpread: number
}

export const DEFAULT_PARTICIPANT: ParticipantSettings = {
  skill: 0.85,
  erdDepth: 0.3,
  ipsilateralShare: 0.25,
  betaRebound: 0.5,
  wrongClassShare: 0.3,
  fatiguePerHour: 0.15,
  depthSpread: 0.15,
}

export type TrialOutcome = 'as-cued' | 'wrong-class' | 'no-response'

export interface TrialIntent {
  trial: number
  /** The class the cue asked for. */
  cued: string
  /** What the participant imagined (null: nothing). */
  performed: string | null
  outcome: TrialOutcome
  /** ERD depth (fraction of band power) planted over the contralateral area of `performed`. */
  depth: number
  /** Sample at which the imagery started to act. */
  startSample: number
}

export function validateParticipantSettings(s: ParticipantSettings): void {
  const inUnit = (name: keyof ParticipantSettings, max = 1) => {
    const v = s[name]
    if (!(Number.isFinite(v) && v >= 0 && v <= max)) throw new Error(`${name} must be between 0 and ${max}, got ${v}`)
  }
  inUnit('skill')
  inUnit('erdDepth', 0.95)
  inUnit('ipsilateralShare')
  inUnit('betaRebound', 3)
  inUnit('wrongClassShare')
  inUnit('fatiguePerHour')
  inUnit('depthSpread', 1)
}

/**
 * Accuracy a decoder should reach on this participant, given `performedAccuracy`, its accuracy
 * on trials performed as cued (set by the single-trial signal-to-noise ratio; 1 for an ideal
 * decoder on clean data). Trials performed as cued are right with that probability; a
 * wrong-class lapse is decoded as the other class (right only when the decoder errs, for two
 * classes), a no-response lapse is a guess among N classes.
 */
export function impliedAccuracy(
  skill: number,
  classCount: number,
  wrongClassShare = DEFAULT_PARTICIPANT.wrongClassShare,
  performedAccuracy = 1,
): number {
  if (classCount < 2) throw new Error('accuracy needs at least two classes')
  const a = performedAccuracy
  const wrongRight = classCount === 2 ? 1 - a : (1 - a) / (classCount - 1)
  return skill * a + (1 - skill) * ((1 - wrongClassShare) / classCount + wrongClassShare * wrongRight)
}

/** Decides how the participant answers one cue. */
export function decideTrial(
  settings: ParticipantSettings,
  random: RandomStream,
  trial: number,
  cued: string,
  classSet: readonly string[],
  elapsedSeconds: number,
  startSample: number,
): TrialIntent {
  // Draw every random number on every trial so that changing one setting (e.g. skill) moves
  // only the decisions that depend on it, not the whole sequence.
  const lapseDraw = random.uniform()
  const kindDraw = random.uniform()
  const otherDraw = random.uniform()
  const spreadDraw = random.gaussian()
  let performed: string | null = cued
  let outcome: TrialOutcome = 'as-cued'
  if (lapseDraw >= settings.skill) {
    const others = classSet.filter((c) => c !== cued)
    if (kindDraw < settings.wrongClassShare && others.length > 0) {
      performed = others[Math.min(others.length - 1, Math.floor(otherDraw * others.length))]
      outcome = 'wrong-class'
    } else {
      performed = null
      outcome = 'no-response'
    }
  }
  const fatigue = Math.max(0, 1 - settings.fatiguePerHour * (elapsedSeconds / 3600))
  const spread = Math.exp(settings.depthSpread * spreadDraw - (settings.depthSpread * settings.depthSpread) / 2)
  const depth = performed === null || !CLASS_AREAS[performed]?.contralateral ? 0 : Math.min(0.95, settings.erdDepth * fatigue * spread)
  return { trial, cued, performed, outcome, depth, startSample }
}
