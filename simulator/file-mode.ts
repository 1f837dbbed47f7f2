// File mode: a simulated calibration run written as EDF+, BDF or CSV through the project's
// file writers, with the ground truth beside it. The same options give the same bytes.
import { writeRecording, type WritableFormat } from '../app/engine/formats/index'
import type { Recording } from '../app/engine/recording'
import { simulateRecording, type RecordingTruth, type SimulatedRecordingOptions } from './simulated-recording'

export interface SimulatedFileOptions extends SimulatedRecordingOptions {
  format: WritableFormat
}

export function writeSimulatedRecording(options: SimulatedFileOptions): { bytes: Uint8Array; recording: Recording; truth: RecordingTruth } {
  if (!['edf', 'bdf', 'csv'].includes(options.format)) throw new Error(`format must be edf, bdf or csv, got '${String(options.format)}'`)
  const { recording, truth } = simulateRecording(options)
  return { bytes: writeRecording(recording, options.format), recording, truth }
}

/** The file format a name implies (.edf, .bdf, .csv), or undefined. */
export function formatFromFileName(fileName: string): WritableFormat | undefined {
  const ext = /\.([A-Za-z0-9]+)$/.exec(fileName)?.[1]?.toLowerCase()
  return ext === 'edf' || ext === 'bdf' || ext === 'csv' ? ext : undefined
}
