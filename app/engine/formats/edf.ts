// EDF and EDF+ (16-bit): read and write. The reading itself is the shared EDF-family parser.

import type { Recording } from '../recording'
import { RecordingFormatError } from './errors'
import { readEdfFamily, type EdfReadResult } from './edf-parser'
import { writeEdfFamily } from './edf-writer'
import type { CueRule } from './cue-rule'

/** Reads an EDF or EDF+ file; a BDF file is refused with a message saying so. */
export function readEdf(bytes: Uint8Array, options: CueRule = {}): Recording {
  return readEdfWithDetails(bytes, options).recording
}

export function readEdfWithDetails(bytes: Uint8Array, options: CueRule = {}): EdfReadResult {
  const result = readEdfFamily(bytes, options)
  if (result.header.variant !== 'edf') {
    throw new RecordingFormatError('this is a BDF file (24-bit), not EDF: read it as BDF', { format: 'bdf', field: 'version', offset: 0 })
  }
  return result
}

/** EDF+C, 16-bit, with an 'EDF Annotations' signal holding cues and annotations. */
export function writeEdf(recording: Recording): Uint8Array {
  return writeEdfFamily(recording, 'edf')
}
