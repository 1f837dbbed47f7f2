// BDF (BioSemi 24-bit) and BDF+ ('BDF Annotations' signal): read and write. A BioSemi
// 'Status' trigger channel is read as an ordinary signal; decoding trigger bits is not done.

import type { Recording } from '../recording'
import { RecordingFormatError } from './errors'
import { readEdfFamily, type EdfReadResult } from './edf-parser'
import { writeEdfFamily } from './edf-writer'
import type { CueRule } from './cue-rule'

export function readBdf(bytes: Uint8Array, options: CueRule = {}): Recording {
  return readBdfWithDetails(bytes, options).recording
}

export function readBdfWithDetails(bytes: Uint8Array, options: CueRule = {}): EdfReadResult {
  const result = readEdfFamily(bytes, options)
  if (result.header.variant !== 'bdf') {
    throw new RecordingFormatError('this is an EDF file (16-bit), not BDF: read it as EDF', { format: 'edf', field: 'version', offset: 0 })
  }
  return result
}

/** BDF with '24BIT' in the reserved field, or BDF+C with a 'BDF Annotations' signal when there are cues or annotations. */
export function writeBdf(recording: Recording): Uint8Array {
  return writeEdfFamily(recording, 'bdf')
}
