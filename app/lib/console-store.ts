// The operator console's state (zustand). Low-rate facts of the session — device link, run,
// cue, decoder, figures, signal quality, events, annotations, training — go through the
// reducer `applyOperatorEvent`, which is pure so a test can drive it with a recorded event
// sequence. High-rate frames (signal, band power, decisions) do not pass through React
// state at all: the console hands them straight to the charts (see useConsoleStream).
import { createStore, type StoreApi } from 'zustand/vanilla'
import type {
  AnnotationEvent,
  ChannelQualityState,
  CueInfo,
  DecisionEvent,
  DecoderInfo,
  DeviceInfo,
  LiveFigures,
  LiveSnapshot,
  OperatorEvents,
  QualityEvent,
  RunInfo,
  SessionEventInfo,
  TrainingInfo,
  TrialEvent,
} from '~/live/events'

/** The states the console shows in words (product brief: clear states). */
export type ConsoleState = 'no device' | 'device connected' | 'recording' | 'decoding' | 'paused' | 'stopped' | 'device lost'

export type StreamStatus = 'connecting' | 'open' | 'retrying' | 'closed'

export const EMPTY_FIGURES: LiveFigures = {
  trialsDone: 0,
  trialsTotal: 0,
  accuracy: null,
  latencyP50Ms: null,
  latencyP99Ms: null,
  blocksReceived: 0,
  sequenceGaps: 0,
  duplicates: 0,
  reordered: 0,
  decisionsMade: 0,
  decisionsLogged: 0,
}

export const NO_DEVICE: DeviceInfo = { state: 'none', device: null, channels: [], rateHz: null, connectedAt: null, reason: null }

export interface ConsoleData {
  sessionStatus: string
  device: DeviceInfo
  run: RunInfo | null
  cue: CueInfo | null
  decoder: DecoderInfo | null
  figures: LiveFigures
  classes: string[]
  montage: string[]
  quality: Record<string, { state: ChannelQualityState; rmsUv: number }>
  /** Newest first, bounded. */
  events: SessionEventInfo[]
  annotations: AnnotationEvent[]
  /** Newest first, bounded: trial outcomes of the runs seen in this console. */
  trials: TrialEvent[]
  training: TrainingInfo | null
  /** Display frames the server dropped for this console because it fell behind. */
  lagDropped: number
  lastDecision: Pick<DecisionEvent, 'className' | 'probability' | 'control' | 'latencyMs'> | null
  snapshotAt: number | null
}

export interface ConsoleView {
  signal: 'raw' | 'filtered'
  /** Spacing between channel traces, microvolts. */
  scaleUv: number
  /** Seconds of signal across the chart. */
  windowSeconds: number
}

export interface ConsoleStore extends ConsoleData {
  view: ConsoleView
  stream: StreamStatus
  apply<K extends keyof OperatorEvents>(name: K, data: OperatorEvents[K]): void
  setView(patch: Partial<ConsoleView>): void
  setStream(status: StreamStatus): void
}

export const EVENT_LIMIT = 200
export const TRIAL_LIMIT = 400

export function initialConsoleData(seed: Partial<ConsoleData> = {}): ConsoleData {
  return {
    sessionStatus: 'planned',
    device: NO_DEVICE,
    run: null,
    cue: null,
    decoder: null,
    figures: EMPTY_FIGURES,
    classes: [],
    montage: [],
    quality: {},
    events: [],
    annotations: [],
    trials: [],
    training: null,
    lagDropped: 0,
    lastDecision: null,
    snapshotAt: null,
    ...seed,
  }
}

function fromSnapshot(prev: ConsoleData, s: LiveSnapshot): ConsoleData {
  return {
    ...prev,
    sessionStatus: s.sessionStatus,
    device: s.device,
    run: s.run,
    cue: s.cue,
    decoder: s.decoder,
    figures: s.figures,
    classes: s.classes,
    montage: s.montage,
    snapshotAt: Date.now(),
  }
}

function qualityMap(q: QualityEvent): ConsoleData['quality'] {
  const out: ConsoleData['quality'] = {}
  for (const c of q.channels) out[c.name] = { state: c.state, rmsUv: c.rmsUv }
  return out
}

/**
 * The console's reducer: the next state after one operator-stream event. High-rate frames
 * (signal, bandpower) leave the state alone; a decision only updates the last-decision line.
 */
export function applyOperatorEvent<K extends keyof OperatorEvents>(prev: ConsoleData, name: K, data: OperatorEvents[K]): ConsoleData {
  switch (name) {
    case 'snapshot':
      return fromSnapshot(prev, data as LiveSnapshot)
    case 'device':
      return { ...prev, device: data as DeviceInfo }
    case 'run': {
      const run = data as RunInfo
      // A new run resets what belonged to the previous one.
      const cue = prev.run && prev.run.id !== run.id ? null : prev.cue
      return { ...prev, run, cue: run.status === 'running' || run.status === 'paused' ? cue : null, sessionStatus: prev.sessionStatus === 'planned' ? 'live' : prev.sessionStatus }
    }
    case 'cue':
      return { ...prev, cue: data as CueInfo }
    case 'figures':
      return { ...prev, figures: data as LiveFigures }
    case 'quality':
      return { ...prev, quality: qualityMap(data as QualityEvent) }
    case 'event': {
      const e = data as SessionEventInfo
      const sessionStatus = e.kind === 'session_ended' ? 'ended' : prev.sessionStatus
      return { ...prev, sessionStatus, events: [e, ...prev.events].slice(0, EVENT_LIMIT) }
    }
    case 'trial':
      return { ...prev, trials: [data as TrialEvent, ...prev.trials].slice(0, TRIAL_LIMIT) }
    case 'annotation': {
      const a = data as AnnotationEvent
      if (prev.annotations.some((x) => x.id === a.id)) return prev
      return { ...prev, annotations: [...prev.annotations, a] }
    }
    case 'decoder':
      return { ...prev, decoder: data as DecoderInfo | null }
    case 'training':
      return { ...prev, training: data as TrainingInfo }
    case 'lag':
      return { ...prev, lagDropped: prev.lagDropped + (data as { dropped: number }).dropped }
    case 'decision': {
      const d = data as DecisionEvent
      return { ...prev, lastDecision: { className: d.className, probability: d.probability, control: d.control, latencyMs: d.latencyMs } }
    }
    default:
      return prev
  }
}

/** The one word the console shows for where the session stands. */
export function consoleState(d: Pick<ConsoleData, 'device' | 'run'>): ConsoleState {
  const run = d.run
  if (d.device.state === 'lost') return 'device lost'
  if (run?.status === 'paused') return 'paused'
  if (run?.status === 'running') {
    if (d.device.state === 'none') return 'device lost'
    return run.kind === 'calibration' ? 'recording' : 'decoding'
  }
  if (d.device.state === 'none') return 'no device'
  if (run && (run.status === 'stopped' || run.status === 'completed' || run.status === 'interrupted')) return 'stopped'
  return 'device connected'
}

/** What the run controls allow in a given state (the server checks again). */
export function allowedControls(d: Pick<ConsoleData, 'device' | 'run' | 'decoder' | 'sessionStatus'>) {
  const ended = d.sessionStatus === 'ended' || d.sessionStatus === 'interrupted'
  const active = d.run?.status === 'running' || d.run?.status === 'paused'
  const linked = d.device.state === 'connected'
  return {
    startCalibration: !ended && !active && linked,
    startFeedback: !ended && !active && linked && d.decoder !== null,
    pause: d.run?.status === 'running',
    resume: d.run?.status === 'paused',
    stop: active,
    endSession: !ended && !active,
  }
}

export function createConsoleStore(seed: Partial<ConsoleData> = {}): StoreApi<ConsoleStore> {
  return createStore<ConsoleStore>((set) => ({
    ...initialConsoleData(seed),
    view: { signal: 'filtered', scaleUv: 50, windowSeconds: 5 },
    stream: 'connecting',
    apply: (name, data) => set((s) => applyOperatorEvent(s, name, data) as Partial<ConsoleStore>),
    setView: (patch) => set((s) => ({ view: { ...s.view, ...patch } })),
    setStream: (stream) => set({ stream }),
  }))
}
