// Training a decoder from a calibration recording: causal band-pass -> epochs -> spatial
// filter W -> log band power -> shrinkage LDA, with chronological k-fold cross-validation in
// which W is fitted inside every fold on the training trials only. The result is a versioned,
// JSON-safe object that the online path applies unchanged.
import type { TrialSet } from './covariance'
import { buildTrialSet, classesOf, planEpochs, subsetTrials, type EpochPlan } from './epochs'
import { fitLda, ldaPredict, type FittedLda } from './lda'
import { quadForm } from './linalg'
import { accuracy, chanceLevel, cohenKappa, confusionMatrix, itrBitsPerMinute, itrBitsPerTrial } from './metrics'
import type { Recording } from './recording'
import { DEFAULT_FILTER_BANK } from './spatial/fbcsp'
import { getSpatialMethod, SPATIAL_METHODS, type ChannelPosition, type FittedSpatial, type SpatialContext, type SpatialMethodName } from './spatial/index'
import { ICA_DEFAULT_COMPONENTS, ICA_SAMPLE_BUDGET } from './spatial/unsupervised'

export interface TrainOptions {
  method?: SpatialMethodName
  /** band-pass in Hz (default 8-30: mu and beta, common practice) */
  band?: [number, number]
  /** Butterworth prototype order (default 4) */
  filterOrder?: number
  /** mains notch in Hz, or null for none (default null) */
  notchHz?: number | null
  /** epoch after cue onset in seconds (default 0.5-2.5) */
  epoch?: [number, number]
  /** online sliding window (default: the epoch length, so online features equal training features) */
  windowSeconds?: number
  /** class names in decoder order; default: cue labels in order of first appearance */
  classes?: string[]
  folds?: number
  /** CSP filters from each end (default 3; filter-bank CSP default 2 per band) */
  pairs?: number
  positions?: ChannelPosition[]
  filterBank?: [number, number][]
  seed?: number
  /** ISO time stamp to record; the engine reads no clock when this is given */
  trainedAt?: string
}

export interface FoldResult {
  index: number
  trainTrials: number
  testTrials: number
  accuracy: number
}

export interface CvResult {
  k: number
  trials: number
  accuracy: number
  kappa: number
  /** confusion[true][predicted] */
  confusion: number[][]
  folds: FoldResult[]
  /** binomial chance level at alpha = 0.05 for this trial count (Müller-Putz et al. 2008) */
  chanceLevel: number
  itrBitsPerTrial: number
  itrBitsPerMinute: number
}

export interface Decoder {
  version: 1
  method: SpatialMethodName
  channels: string[]
  classes: string[]
  rateHz: number
  band: [number, number]
  filterOrder: number
  notchHz: number | null
  windowSeconds: number
  epoch: [number, number]
  /** W: component × channel */
  filters: number[][]
  /** A: component × channel (Haufe et al. 2014) */
  patterns: number[][]
  componentNames: string[]
  /** band of each component (all equal to `band` except for filter-bank CSP) */
  componentBands: [number, number][]
  lda: FittedLda
  cv: CvResult
  trainedAt: string
  trialCount: number
  skippedTrials: number
}

interface Prepared {
  plan: EpochPlan
  main: TrialSet
  bank?: { band: [number, number]; trials: TrialSet }[]
}

interface Resolved {
  method: SpatialMethodName
  band: [number, number]
  filterOrder: number
  notchHz: number | null
  epoch: [number, number]
  windowSeconds: number
  classes: string[]
  folds: number
  ctx: Omit<SpatialContext, 'bandTrials'>
  filterBank: [number, number][]
}

function resolve(recording: Recording, options: TrainOptions): Resolved {
  validateRecording(recording)
  const epoch = options.epoch ?? [0.5, 2.5]
  const classes = classesOf(recording, options.classes)
  if (classes.length < 2) throw new Error(`training needs at least two classes of cues; found ${classes.length} (${classes.join(', ') || 'none'})`)
  const nyquist = recording.rateHz / 2
  return {
    method: options.method ?? 'csp',
    band: options.band ?? [8, 30],
    filterOrder: options.filterOrder ?? 4,
    notchHz: options.notchHz ?? null,
    epoch,
    windowSeconds: options.windowSeconds ?? epoch[1] - epoch[0],
    classes,
    folds: options.folds ?? 5,
    ctx: { channels: recording.channels, classes, positions: options.positions, pairs: options.pairs, seed: options.seed },
    filterBank: (options.filterBank ?? DEFAULT_FILTER_BANK).filter(([, hi]) => hi < nyquist),
  }
}

function validateRecording(recording: Recording): void {
  const C = recording.channels.length
  if (C === 0) throw new Error('recording has no channels')
  if (recording.data.length !== C) throw new Error(`recording lists ${C} channels but holds ${recording.data.length}`)
  if (!(recording.rateHz > 0)) throw new Error('recording has no valid sampling rate')
  const n = recording.data[0].length
  if (recording.data.some((d) => d.length !== n)) throw new Error('recording channels differ in length')
  if (recording.cues.length === 0) {
    const texts = [...new Set(recording.annotations.map((a) => a.text.trim()).filter(Boolean))].slice(0, 12)
    throw new Error(`recording has no cues to train on${texts.length ? `; its annotations read: ${texts.join(', ')} (name the cue texts with --classes or --cue-labels)` : ''}`)
  }
}

function prepare(recording: Recording, r: Resolved, methods: SpatialMethodName[]): Prepared {
  const plan = planEpochs(recording, r.classes, r.epoch)
  const fourth = methods.includes('rcsp')
  const thinnedSamples = methods.includes('ica') ? Math.max(8, Math.ceil(ICA_SAMPLE_BUDGET / plan.trials.length)) : undefined
  const main = buildTrialSet(recording, plan, { band: r.band, order: r.filterOrder, notchHz: r.notchHz }, { fourth, thinnedSamples })
  let bank: Prepared['bank']
  if (methods.includes('fbcsp')) {
    if (r.filterBank.length === 0) throw new Error('no filter-bank band lies below the Nyquist frequency')
    bank = r.filterBank.map((band) => ({ band, trials: buildTrialSet(recording, plan, { band, order: r.filterOrder, notchHz: r.notchHz }) }))
  }
  return { plan, main, bank }
}

/** Log band power of each component for the given trials, from their second moments. */
function features(fitted: FittedSpatial, prep: Prepared, indices: number[]): number[][] {
  return indices.map((t) =>
    fitted.filters.map((w, k) => {
      const set = fitted.componentBands ? prep.bank![fitted.componentBands[k]].trials : prep.main
      return Math.log(Math.max(quadForm(w, set.outer[t], set.channels) / set.samples[t], 1e-300))
    }),
  )
}

function fitSpatial(method: SpatialMethodName, prep: Prepared, indices: number[], labels: number[], r: Resolved): FittedSpatial {
  const ctx: SpatialContext = { ...r.ctx }
  if (prep.bank) ctx.bandTrials = prep.bank.map((b) => ({ band: b.band, trials: subsetTrials(b.trials, indices) }))
  return getSpatialMethod(method).fit(subsetTrials(prep.main, indices), indices.map((i) => labels[i]), ctx)
}

/** Chronological k-fold: contiguous blocks of trials in time order, each tested once. */
export function chronologicalFolds(trialCount: number, k: number): number[][] {
  if (!Number.isInteger(k) || k < 2) throw new Error(`folds must be an integer >= 2, got ${k}`)
  if (trialCount < k) throw new Error(`${trialCount} trials cannot be split into ${k} folds`)
  return Array.from({ length: k }, (_, f) => {
    const from = Math.floor((f * trialCount) / k)
    const to = Math.floor(((f + 1) * trialCount) / k)
    return Array.from({ length: to - from }, (_, i) => from + i)
  })
}

function crossValidate(method: SpatialMethodName, prep: Prepared, r: Resolved, secondsPerTrial: number): CvResult {
  const labels = prep.plan.trials.map((t) => t.label)
  const N = labels.length
  const K = r.classes.length
  const predicted = new Array<number>(N).fill(-1)
  const folds: FoldResult[] = []
  chronologicalFolds(N, r.folds).forEach((test, index) => {
    const testSet = new Set(test)
    const train = labels.map((_, i) => i).filter((i) => !testSet.has(i))
    const trainLabels = train.map((i) => labels[i])
    for (let k = 0; k < K; k++) {
      if (trainLabels.filter((l) => l === k).length < 2) throw new Error(`fold ${index + 1} has fewer than 2 training trials of '${r.classes[k]}'; use fewer folds`)
    }
    const fitted = fitSpatial(method, prep, train, labels, r)
    const lda = fitLda(features(fitted, prep, train), trainLabels, K)
    const out = ldaPredict(lda, features(fitted, prep, test))
    test.forEach((t, i) => (predicted[t] = out[i]))
    folds.push({ index, trainTrials: train.length, testTrials: test.length, accuracy: accuracy(test.map((t) => labels[t]), out) })
  })
  const acc = accuracy(labels, predicted)
  return {
    k: r.folds,
    trials: N,
    accuracy: acc,
    kappa: cohenKappa(labels, predicted, K),
    confusion: confusionMatrix(labels, predicted, K),
    folds,
    chanceLevel: chanceLevel(N, K, 0.05),
    itrBitsPerTrial: itrBitsPerTrial(K, acc),
    itrBitsPerMinute: itrBitsPerMinute(K, acc, secondsPerTrial),
  }
}

/** Seconds per selection for ITR: the mean cue-to-cue interval of the trials. */
function trialSeconds(recording: Recording, plan: EpochPlan, r: Resolved): number {
  const starts = plan.trials.map((t) => t.start)
  if (starts.length < 2) return r.epoch[1]
  return (starts[starts.length - 1] - starts[0]) / (starts.length - 1) / recording.rateHz
}

function assemble(recording: Recording, r: Resolved, prep: Prepared, fitted: FittedSpatial, lda: FittedLda, cv: CvResult, trainedAt?: string): Decoder {
  return {
    version: 1,
    method: r.method,
    channels: [...recording.channels],
    classes: r.classes,
    rateHz: recording.rateHz,
    band: r.band,
    filterOrder: r.filterOrder,
    notchHz: r.notchHz,
    windowSeconds: r.windowSeconds,
    epoch: r.epoch,
    filters: fitted.filters.map((w) => Array.from(w)),
    patterns: fitted.patterns,
    componentNames: fitted.componentNames,
    componentBands: fitted.componentBands ? fitted.componentBands.map((b) => fitted.bands![b]) : fitted.filters.map(() => r.band),
    lda,
    cv,
    trainedAt: trainedAt ?? new Date().toISOString(),
    trialCount: prep.plan.trials.length,
    skippedTrials: prep.plan.skipped,
  }
}

/** Cross-validates, then fits W and the LDA on all trials. */
export function trainDecoder(recording: Recording, options: TrainOptions = {}): Decoder {
  const r = resolve(recording, options)
  getSpatialMethod(r.method)
  const prep = prepare(recording, r, [r.method])
  const cv = crossValidate(r.method, prep, r, trialSeconds(recording, prep.plan, r))
  const all = prep.plan.trials.map((_, i) => i)
  const labels = prep.plan.trials.map((t) => t.label)
  const fitted = fitSpatial(r.method, prep, all, labels, r)
  const lda = fitLda(features(fitted, prep, all), labels, r.classes.length)
  return assemble(recording, r, prep, fitted, lda, cv, options.trainedAt)
}

export interface ComparisonRow {
  method: SpatialMethodName
  accuracy: number | null
  kappa: number | null
  chanceLevel: number | null
  itrBitsPerTrial: number | null
  foldAccuracy: number[]
  components: number
  /** why the method could not run on this recording (e.g. no positions, too many classes) */
  error?: string
}

/** Cross-validates every spatial method on the same trials and folds. */
export function compareMethods(recording: Recording, options: TrainOptions & { methods?: SpatialMethodName[] } = {}): ComparisonRow[] {
  const r = resolve(recording, options)
  const methods = options.methods ?? SPATIAL_METHODS
  const prep = prepare(recording, r, methods)
  const secondsPerTrial = trialSeconds(recording, prep.plan, r)
  return methods.map((method) => {
    try {
      const cv = crossValidate(method, prep, { ...r, method }, secondsPerTrial)
      const all = prep.plan.trials.map((_, i) => i)
      const components = fitSpatial(method, prep, all, prep.plan.trials.map((t) => t.label), r).filters.length
      return {
        method,
        accuracy: cv.accuracy,
        kappa: cv.kappa,
        chanceLevel: cv.chanceLevel,
        itrBitsPerTrial: cv.itrBitsPerTrial,
        foldAccuracy: cv.folds.map((f) => f.accuracy),
        components,
      }
    } catch (error) {
      return {
        method,
        accuracy: null,
        kappa: null,
        chanceLevel: null,
        itrBitsPerTrial: null,
        foldAccuracy: [],
        components: 0,
        error: error instanceof Error ? error.message : String(error),
      }
    }
  })
}

export { ICA_DEFAULT_COMPONENTS }
