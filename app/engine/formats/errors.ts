// One error type for every problem with a recording file, so callers (upload route, command
// line) can show the message and keep the file, and fuzzing can assert nothing else escapes.

export type RecordingFormat = 'edf' | 'bdf' | 'csv' | 'unknown'

export interface RecordingFormatErrorDetails {
  format: RecordingFormat
  /** Header field or column concerned, e.g. 'number of data records', 'C3'. */
  field?: string
  /** Byte offset in the file where the problem is (EDF/BDF). */
  offset?: number
  /** 1-based line (CSV). */
  line?: number
}

export class RecordingFormatError extends Error {
  readonly format: RecordingFormat
  readonly field?: string
  readonly offset?: number
  readonly line?: number

  constructor(message: string, details: RecordingFormatErrorDetails) {
    super(message)
    this.name = 'RecordingFormatError'
    this.format = details.format
    this.field = details.field
    this.offset = details.offset
    this.line = details.line
  }
}
