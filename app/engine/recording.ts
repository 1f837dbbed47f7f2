// The in-memory shape of a recording, shared by the file readers and writers, the simulator,
// training and replay. Samples are channel-major (one Float32Array per channel), microvolts.

export interface Cue {
  /** Sample index of cue onset. */
  sample: number
  /** Class name, e.g. 'left', 'right', 'feet'. */
  label: string
}

export interface Annotation {
  onsetSeconds: number
  durationSeconds: number
  text: string
}

export interface Recording {
  channels: string[]
  rateHz: number
  /** data[channel][sample], microvolts. */
  data: Float32Array[]
  /** Cue onsets; in EDF+ each is an annotation whose text is the class name. */
  cues: Cue[]
  /** Other annotations (not cues), kept for round trips. */
  annotations: Annotation[]
  /** Optional header fields carried through file round trips. */
  meta?: { patientId?: string; recordingId?: string; startDate?: Date }
}

export function sampleCount(recording: Recording): number {
  return recording.data.length === 0 ? 0 : recording.data[0].length
}
