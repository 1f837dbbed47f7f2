// A whole simulated calibration run as a Recording plus the ground truth of what was
// planted. Pure: the same options give the same recording, sample for sample.
import type { Recording } from '../app/engine/recording'
import { createSimulatedParticipant, type SimulationTruth, type SimulatorOptions } from './generator'
import { DEFAULT_TIMING, balancedTrialSchedule, type ScheduledTrial, type TrialTiming } from './schedule'

export interface SimulatedRecordingOptions extends SimulatorOptions {
  classes?: readonly string[]
  trialsPerClass: number
  timing?: Partial<TrialTiming>
}

export interface RecordingTruth extends SimulationTruth {
  schedule: ScheduledTrial[]
}

/** Recordings larger than this many values (4 bytes each) are refused rather than exhausting memory. */
export const MAX_RECORDING_VALUES = 80_000_000

export function simulateRecording(options: SimulatedRecordingOptions): { recording: Recording; truth: RecordingTruth } {
  const classes = [...(options.classes ?? ['left', 'right'])]
  const timing: TrialTiming = { ...DEFAULT_TIMING, ...options.timing }
  const schedule = balancedTrialSchedule(classes, options.trialsPerClass, options.rateHz, options.seed, timing)
  const participant = createSimulatedParticipant({ ...options, classes })
  const C = participant.channelCount
  const total = schedule.sampleCount
  if (total * C > MAX_RECORDING_VALUES) {
    throw new Error(`a recording of ${C} channels × ${total} samples is too large to simulate in memory; use fewer trials, channels or a lower rate`)
  }
  for (const event of schedule.events) participant.cue(event)
  const data = Array.from({ length: C }, () => new Float32Array(total))
  const chunk = Math.max(1, Math.round(participant.rateHz))
  const block = new Float32Array(chunk * C)
  for (let start = 0; start < total; start += chunk) {
    const n = Math.min(chunk, total - start)
    participant.generate(n, block)
    for (let s = 0; s < n; s++) {
      const row = s * C
      for (let c = 0; c < C; c++) data[c][start + s] = block[row + c]
    }
  }
  const recording: Recording = {
    channels: participant.channels.map((c) => c.name),
    rateHz: participant.rateHz,
    data,
    cues: schedule.trials.map((t) => ({ sample: t.cueSample, label: t.label })),
    annotations: [{ onsetSeconds: 0, durationSeconds: 0, text: `simulated participant, seed ${options.seed}` }],
    // No start date: the file writers then use a fixed one, so the same seed gives the same file.
    meta: { patientId: 'simulated', recordingId: `seed-${options.seed}` },
  }
  return { recording, truth: { ...participant.truth(), schedule: schedule.trials } }
}
