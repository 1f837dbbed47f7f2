// The server-sent events of the live API: names and payload shapes shared by the server
// (app/live) and the console and feedback view. Pure types and constants, safe in the browser.
// docs/live-api.md describes when each is sent.

export type DeviceState = 'none' | 'connected' | 'lost'
export type RunKind = 'calibration' | 'feedback'
export type RunStatus = 'pending' | 'running' | 'paused' | 'stopped' | 'completed' | 'interrupted'
export type TrialPhase = 'fixation' | 'cue' | 'imagery' | 'rest'
export type TrialOutcome = 'recorded' | 'hit' | 'miss' | 'timeout'
export type ChannelQualityState = 'good' | 'flat' | 'noisy'

export interface DeviceInfo {
  state: DeviceState
  device: string | null
  channels: string[]
  rateHz: number | null
  connectedAt: string | null
  /** Why the last link ended (close reason), when state is 'lost' or 'none' after a link. */
  reason: string | null
}

export interface RunInfo {
  id: string
  kind: RunKind
  index: number
  status: RunStatus
  trialsDone: number
  trialsTotal: number
  hits: number
  misses: number
  timeouts: number
  startedAt: string | null
  endedAt: string | null
  decoderId: string | null
}

export interface CueInfo {
  runId: string
  /** 0-based trial index within the run. */
  trial: number
  label: string
  phase: TrialPhase
  /** Sample index (run clock of the device) at which this phase began. */
  atSample: number
  durationMs: number
}

export interface DecoderInfo {
  id: string
  version: number
  method: string
  classes: string[]
  cvAccuracy: number | null
}

export interface LiveFigures {
  trialsDone: number
  trialsTotal: number
  /** Running accuracy of the current feedback run: hits / (hits + misses + timeouts). */
  accuracy: number | null
  latencyP50Ms: number | null
  latencyP99Ms: number | null
  blocksReceived: number
  sequenceGaps: number
  duplicates: number
  reordered: number
  decisionsMade: number
  decisionsLogged: number
}

export interface TrainingInfo {
  jobId: string
  state: 'queued' | 'running' | 'done' | 'failed'
  runIds: string[]
  decoderId: string | null
  error: string | null
}

export interface LiveSnapshot {
  sessionId: string
  sessionStatus: string
  device: DeviceInfo
  run: RunInfo | null
  cue: CueInfo | null
  decoder: DecoderInfo | null
  figures: LiveFigures
  classes: string[]
  montage: string[]
}

export interface DecisionEvent {
  runId: string
  sample: number
  output: number
  /** Display control signal in [-1, 1], smoothed if the run asked for it; positive = classes[1]. */
  control: number
  probability: number
  classIndex: number
  className: string
  trial: number | null
  cue: string | null
  latencyMs: number
}

export interface SignalEvent {
  /** Sample index of the first displayed sample (device clock). */
  firstSample: number
  /** Rate of the displayed samples after decimation. */
  displayRateHz: number
  /** Channel-major: raw[channel][i], microvolts. */
  raw: number[][]
  /** Band-pass filtered, same layout; null if no filter is set. */
  filtered: number[][] | null
}

export interface BandPowerEvent {
  sample: number
  /** Component names, e.g. 'CSP 1'; log-variance values in the same order. */
  components: string[]
  values: number[]
}

export interface QualityEvent {
  channels: { name: string; rmsUv: number; state: ChannelQualityState }[]
}

export interface SessionEventInfo {
  kind: string
  at: string
  sample: number | null
  detail: Record<string, unknown>
}

export interface TrialEvent {
  runId: string
  index: number
  label: string
  outcome: TrialOutcome
  decidedClass: string | null
}

export interface AnnotationEvent {
  id: string
  runId: string | null
  sample: number | null
  text: string
  authorName: string | null
  createdAt: string
}

export interface FeedbackEvent {
  runId: string
  trial: number | null
  control: number
  className: string
  probability: number
}

export interface LagEvent {
  /** Events this client missed because its connection was too slow (display frames only). */
  dropped: number
}

/** Operator stream (console): every event below. */
export interface OperatorEvents {
  snapshot: LiveSnapshot
  device: DeviceInfo
  run: RunInfo
  cue: CueInfo
  decision: DecisionEvent
  signal: SignalEvent
  bandpower: BandPowerEvent
  quality: QualityEvent
  figures: LiveFigures
  event: SessionEventInfo
  trial: TrialEvent
  annotation: AnnotationEvent
  decoder: DecoderInfo | null
  training: TrainingInfo
  lag: LagEvent
}

/** Participant stream (feedback view): cue and feedback only. */
export interface FeedbackSnapshot {
  sessionId: string
  run: RunInfo | null
  cue: CueInfo | null
  classes: string[]
}
export interface FeedbackEvents {
  snapshot: FeedbackSnapshot
  run: RunInfo
  cue: CueInfo
  feedback: FeedbackEvent
  trial: TrialEvent
  lag: LagEvent
}

export type OperatorEventName = keyof OperatorEvents
export type FeedbackEventName = keyof FeedbackEvents

export const OPERATOR_EVENT_NAMES: OperatorEventName[] = [
  'snapshot', 'device', 'run', 'cue', 'decision', 'signal', 'bandpower', 'quality', 'figures', 'event', 'trial', 'annotation', 'decoder', 'training', 'lag',
]
export const FEEDBACK_EVENT_NAMES: FeedbackEventName[] = ['snapshot', 'run', 'cue', 'feedback', 'trial', 'lag']

/** Run controls accepted by POST /live/:sessionId/runs (field `intent`). */
export type RunIntent = 'start' | 'pause' | 'resume' | 'stop' | 'end-session'
