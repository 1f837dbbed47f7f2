// The state machine of one run, driven by the device's sample clock: each accepted block moves
// the trial phases forward (fixation -> cue -> imagery -> rest), so cues line up with the
// recorded samples exactly and a run whose device stalls simply waits. Pure: it returns what
// happened and the session coordinator sends, records and publishes it.
import type { ScheduledTrial } from './schedule.ts'
import type { RunKind, RunStatus, TrialPhase } from './events.ts'

export interface PhaseChange {
  trial: ScheduledTrial
  phase: TrialPhase
  /** Device-clock sample at which the phase begins. */
  atSample: number
  lengthSamples: number
}

export interface CompletedTrial {
  trial: ScheduledTrial
  /** Device-clock samples of cue onset and end of imagery. */
  cueSample: number
  endSample: number
  cueAtMs: number
}

export interface AdvanceResult {
  changes: PhaseChange[]
  completed: CompletedTrial[]
  /** The last trial's rest ended: the run is complete. */
  finished: boolean
}

interface CurrentTrial {
  trial: ScheduledTrial
  phase: TrialPhase
  phaseStart: number
  phaseEnd: number
  cueSample: number
  cueAtMs: number
}

const ORDER: TrialPhase[] = ['fixation', 'cue', 'imagery', 'rest']

export class RunState {
  status: RunStatus = 'running'
  private queue: ScheduledTrial[]
  private current: CurrentTrial | null = null
  trialsDone = 0
  hits = 0
  misses = 0
  timeouts = 0
  aborted = 0
  /** Where the next trial starts when none is in progress: the run start, then each resume point. */
  private nextStartAt: number

  constructor(
    readonly id: string,
    readonly kind: RunKind,
    readonly index: number,
    readonly decoderId: string | null,
    readonly schedule: ScheduledTrial[],
    /** Device-clock sample index where the run's own clock (sample 0) starts. */
    readonly startSample: number,
    readonly startedAt: Date,
  ) {
    this.queue = [...schedule]
    this.nextStartAt = startSample
  }

  get trialsTotal(): number {
    return this.schedule.length
  }

  get active(): boolean {
    return this.status === 'running' || this.status === 'paused'
  }

  /** The trial and cue in force now (the cue label only during cue and imagery). */
  inForce(): { trial: number | null; cue: string | null; phase: TrialPhase | null } {
    if (!this.current) return { trial: null, cue: null, phase: null }
    const showing = this.current.phase === 'cue' || this.current.phase === 'imagery'
    return { trial: this.current.trial.index, cue: showing ? this.current.trial.label : null, phase: this.current.phase }
  }

  currentPhase(): PhaseChange | null {
    if (!this.current) return null
    return { trial: this.current.trial, phase: this.current.phase, atSample: this.current.phaseStart, lengthSamples: this.current.phaseEnd - this.current.phaseStart }
  }

  /** Moves the schedule to `nowSample` (the sample after the latest block). */
  advance(nowSample: number, nowMs: number): AdvanceResult {
    const result: AdvanceResult = { changes: [], completed: [], finished: false }
    if (this.status !== 'running') return result
    if (!this.current) {
      if (!this.startNext(this.nextStartAt, nowMs, result)) {
        result.finished = true
        return result
      }
    }
    while (this.current && nowSample >= this.current.phaseEnd) {
      const c: CurrentTrial = this.current
      const at = c.phaseEnd
      const next = ORDER[ORDER.indexOf(c.phase) + 1]
      if (c.phase === 'imagery') {
        result.completed.push({ trial: c.trial, cueSample: c.cueSample, endSample: at, cueAtMs: c.cueAtMs })
        this.trialsDone++
      }
      if (!next) {
        this.current = null
        if (!this.startNext(at, nowMs, result)) {
          result.finished = true
          return result
        }
        continue
      }
      const length = c.trial[next]
      this.current = { ...c, phase: next, phaseStart: at, phaseEnd: at + length }
      if (next === 'cue') {
        this.current.cueSample = at
        this.current.cueAtMs = nowMs
      }
      result.changes.push({ trial: c.trial, phase: next, atSample: at, lengthSamples: length })
    }
    return result
  }

  private startNext(at: number, nowMs: number, result: AdvanceResult): boolean {
    const trial = this.queue.shift()
    if (!trial) return false
    this.current = { trial, phase: 'fixation', phaseStart: at, phaseEnd: at + trial.fixation, cueSample: -1, cueAtMs: nowMs }
    result.changes.push({ trial, phase: 'fixation', atSample: at, lengthSamples: trial.fixation })
    return true
  }

  /** Pausing abandons a trial that has not finished its imagery; it is given again after resume. */
  pause(): void {
    if (this.status !== 'running') throw new Error(`cannot pause a run that is ${this.status}`)
    this.status = 'paused'
    this.abandonCurrent()
  }

  resume(atSample: number): void {
    if (this.status !== 'paused') throw new Error(`cannot resume a run that is ${this.status}`)
    this.status = 'running'
    this.nextStartAt = atSample
  }

  endedAt: Date | null = null

  end(status: 'stopped' | 'completed' | 'interrupted'): void {
    this.abandonCurrent(false)
    this.status = status
    this.endedAt = new Date()
  }

  private abandonCurrent(requeue = true): void {
    const c = this.current
    this.current = null
    if (!c || c.phase === 'rest') return
    this.aborted++
    if (requeue) this.queue.unshift(c.trial)
  }
}
