// Cutting a recording into trials by its cues, after the same causal filter the online path
// runs, so a trial's samples are exactly what the live decoder sees at that moment.
import { addTrial, type TrialSet, type TrialSetOptions } from './covariance'
import { designDecoderFilter, packSos, sosFilterChannel } from './filters'
import type { Recording } from './recording'
import { sampleCount } from './recording'

export interface PlannedTrial {
  /** index into recording.cues */
  cue: number
  /** first sample of the epoch */
  start: number
  /** class index into the class list */
  label: number
}

export interface EpochPlan {
  classes: string[]
  trials: PlannedTrial[]
  /** samples per epoch */
  length: number
  /** cues of the chosen classes whose epoch ran past the end of the recording */
  skipped: number
}

/** Classes in order of first appearance among the cues, unless given. */
export function classesOf(recording: Recording, classes?: string[]): string[] {
  if (classes && classes.length > 0) return classes
  const seen: string[] = []
  for (const cue of recording.cues) if (!seen.includes(cue.label)) seen.push(cue.label)
  return seen
}

export function planEpochs(recording: Recording, classes: string[], epoch: [number, number]): EpochPlan {
  const [t0, t1] = epoch
  if (!(t1 > t0)) throw new Error(`epoch end (${t1} s) must come after its start (${t0} s)`)
  const offset = Math.round(t0 * recording.rateHz)
  const length = Math.round((t1 - t0) * recording.rateHz)
  if (length < 2) throw new Error('epoch is shorter than two samples')
  const total = sampleCount(recording)
  const trials: PlannedTrial[] = []
  let skipped = 0
  recording.cues.forEach((cue, i) => {
    const label = classes.indexOf(cue.label)
    if (label < 0) return
    const start = cue.sample + offset
    if (start < 0 || start + length > total) {
      skipped++
      return
    }
    trials.push({ cue: i, start, label })
  })
  trials.sort((a, b) => a.start - b.start)
  for (const [k, name] of classes.entries()) {
    const count = trials.filter((t) => t.label === k).length
    if (count < 2) throw new Error(`class '${name}' has ${count} usable trial(s) in this recording; at least 2 are needed`)
  }
  return { classes, trials, length, skipped }
}

export interface FilterSpec {
  band: [number, number]
  order: number
  notchHz: number | null
}

/**
 * Filters every channel causally from the first sample (zero initial state, as a fresh online
 * decoder) and gathers each planned epoch's second moments into a TrialSet.
 */
export function buildTrialSet(recording: Recording, plan: EpochPlan, filter: FilterSpec, options: TrialSetOptions = {}): TrialSet {
  const C = recording.channels.length
  const n = plan.length
  const packed = packSos(designDecoderFilter({ band: filter.band, order: filter.order, rateHz: recording.rateHz, notchHz: filter.notchHz }))
  const epochs = plan.trials.map(() => new Float64Array(C * n))
  const scratch = new Float64Array(sampleCount(recording))
  for (let c = 0; c < C; c++) {
    sosFilterChannel(packed, recording.data[c], scratch)
    plan.trials.forEach((t, i) => epochs[i].set(scratch.subarray(t.start, t.start + n), c * n))
  }
  const set: TrialSet = { channels: C, outer: [], samples: [] }
  if (options.fourth) set.fourth = []
  if (options.thinnedSamples) set.thinned = []
  for (const e of epochs) addTrial(set, e, n, options)
  return set
}

/** Restricts a TrialSet to some trials (shares the per-trial arrays). */
export function subsetTrials(set: TrialSet, indices: number[]): TrialSet {
  const out: TrialSet = { channels: set.channels, outer: indices.map((i) => set.outer[i]), samples: indices.map((i) => set.samples[i]) }
  if (set.fourth) out.fourth = indices.map((i) => set.fourth![i])
  if (set.thinned) out.thinned = indices.map((i) => set.thinned![i])
  return out
}
