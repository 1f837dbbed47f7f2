// What the participant's screen shows, from the participant stream (cue and feedback only).
// Pure, so a test can feed it an event sequence.
import type { CueInfo, FeedbackEvent, FeedbackSnapshot, RunInfo, TrialEvent } from '~/live/events'

export type FeedbackScreenKind = 'waiting' | 'fixation' | 'cue' | 'imagery' | 'rest' | 'break' | 'summary'

export interface FeedbackViewState {
  classes: string[]
  run: RunInfo | null
  cue: CueInfo | null
  /** Latest control value in [-1, 1] for the current trial; null outside feedback imagery. */
  control: number | null
  lastTrial: TrialEvent | null
}

export const INITIAL_FEEDBACK: FeedbackViewState = { classes: [], run: null, cue: null, control: null, lastTrial: null }

export type FeedbackAction =
  | { name: 'snapshot'; data: FeedbackSnapshot }
  | { name: 'run'; data: RunInfo }
  | { name: 'cue'; data: CueInfo }
  | { name: 'feedback'; data: FeedbackEvent }
  | { name: 'trial'; data: TrialEvent }

export function reduceFeedback(state: FeedbackViewState, action: FeedbackAction): FeedbackViewState {
  switch (action.name) {
    case 'snapshot':
      return { ...state, classes: action.data.classes, run: action.data.run, cue: action.data.cue, control: null }
    case 'run': {
      const fresh = state.run?.id !== action.data.id
      return { ...state, run: action.data, cue: fresh ? null : state.cue, control: fresh ? null : state.control, lastTrial: fresh ? null : state.lastTrial }
    }
    case 'cue': {
      // A new trial starts from the centre.
      const newTrial = state.cue?.trial !== action.data.trial || state.cue?.runId !== action.data.runId
      return { ...state, cue: action.data, control: newTrial || action.data.phase !== 'imagery' ? null : state.control }
    }
    case 'feedback':
      if (!state.cue || state.cue.phase !== 'imagery' || action.data.runId !== state.cue.runId) return state
      return { ...state, control: Math.max(-1, Math.min(1, action.data.control)) }
    case 'trial':
      return { ...state, lastTrial: action.data }
    default:
      return state
  }
}

const ACTIVE = new Set(['running', 'paused'])

/** The screen for a state: one of the calm full screens, never more than one at a time. */
export function screenOf(s: Pick<FeedbackViewState, 'run' | 'cue'>): FeedbackScreenKind {
  const run = s.run
  if (!run) return 'waiting'
  if (!ACTIVE.has(run.status)) return run.status === 'pending' ? 'waiting' : 'summary'
  if (run.status === 'paused') return 'break'
  if (!s.cue || s.cue.runId !== run.id) return 'fixation'
  return s.cue.phase
}

/** The screen key that identifies one large-area state (a change of key is a luminance change). */
export function screenKey(s: Pick<FeedbackViewState, 'run' | 'cue'>): string {
  const screen = screenOf(s)
  return screen === 'cue' || screen === 'imagery' ? `${screen}:${s.cue?.label}` : screen
}
