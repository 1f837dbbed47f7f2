// Trial schedule of a simulated calibration run: fixation, cue, imagery, rest. Classes are
// block-randomised (each block of N trials holds every class once, in a seeded random order)
// so the run stays balanced at any point and no class comes many times in a row — common
// practice for calibration runs.
import type { CueEvent } from './generator'
import { StreamPurpose, createRandomStream } from './random'

export interface TrialTiming {
  /** Quiet time before the first trial, seconds. */
  leadInSeconds: number
  /** Fixation cross before the cue, seconds (the ERD reference interval). */
  fixationSeconds: number
  /** Cue and imagery, seconds. */
  imagerySeconds: number
  /** Rest after imagery: uniform between these, seconds. */
  restSeconds: [number, number]
}

export const DEFAULT_TIMING: TrialTiming = {
  leadInSeconds: 2,
  fixationSeconds: 2,
  imagerySeconds: 4,
  restSeconds: [1.5, 2.5],
}

export interface ScheduledTrial {
  trial: number
  label: string
  fixationSample: number
  cueSample: number
  restSample: number
  endSample: number
}

export interface TrialSchedule {
  trials: ScheduledTrial[]
  /** Every phase change, in order, as the server would send them. */
  events: CueEvent[]
  sampleCount: number
}

export function balancedTrialSchedule(
  classes: readonly string[],
  trialsPerClass: number,
  rateHz: number,
  seed: number,
  timing: TrialTiming = DEFAULT_TIMING,
): TrialSchedule {
  if (classes.length < 1) throw new Error('a schedule needs at least one class')
  if (new Set(classes).size !== classes.length) throw new Error(`classes repeat: ${classes.join(', ')}`)
  if (!Number.isInteger(trialsPerClass) || trialsPerClass < 1 || trialsPerClass > 10_000) throw new Error(`trials per class must be an integer from 1 to 10000, got ${trialsPerClass}`)
  const [restMin, restMax] = timing.restSeconds
  if (!(timing.fixationSeconds >= 0 && timing.imagerySeconds > 0 && restMin >= 0 && restMax >= restMin && timing.leadInSeconds >= 0)) {
    throw new Error('trial timing must have non-negative durations and a positive imagery time')
  }
  const random = createRandomStream(seed, StreamPurpose.schedule)
  const order: string[] = []
  for (let b = 0; b < trialsPerClass; b++) {
    const block = [...classes]
    for (let i = block.length - 1; i > 0; i--) {
      const j = random.integer(i + 1)
      ;[block[i], block[j]] = [block[j], block[i]]
    }
    order.push(...block)
  }
  const trials: ScheduledTrial[] = []
  const events: CueEvent[] = []
  let t = Math.round(timing.leadInSeconds * rateHz)
  order.forEach((label, trial) => {
    const fixationSample = t
    const cueSample = fixationSample + Math.round(timing.fixationSeconds * rateHz)
    const restSample = cueSample + Math.round(timing.imagerySeconds * rateHz)
    const endSample = restSample + Math.round((restMin + random.uniform() * (restMax - restMin)) * rateHz)
    trials.push({ trial, label, fixationSample, cueSample, restSample, endSample })
    events.push({ trial, label, phase: 'fixation', atSample: fixationSample })
    events.push({ trial, label, phase: 'cue', atSample: cueSample })
    events.push({ trial, label, phase: 'rest', atSample: restSample })
    t = endSample
  })
  if (trials.length > 0) events.push({ trial: trials.length - 1, label: trials[trials.length - 1].label, phase: 'end', atSample: t })
  return { trials, events, sampleCount: t + Math.round(timing.leadInSeconds * rateHz) }
}
