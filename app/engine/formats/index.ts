// Recordings in open formats: one entry point to read any supported file and one to write.

import type { Recording } from '../recording'
import { readEdfFamily } from './edf-parser'
import { detectVariant } from './edf-header'
import { writeEdf } from './edf'
import { writeBdf } from './bdf'
import { readCsv, writeCsv } from './csv'
import { RecordingFormatError } from './errors'
import type { CueRule } from './cue-rule'

export { RecordingFormatError } from './errors'
export type { RecordingFormat } from './errors'
export { createEdfParser } from './edf-parser'
export type { EdfParser, EdfReadOptions, EdfReadResult, SkippedSignal } from './edf-parser'
export type { EdfHeader, EdfSignalHeader } from './edf-header'
export type { CueRule } from './cue-rule'
export { readEdf, writeEdf } from './edf'
export { readBdf, writeBdf } from './bdf'
export { readCsv, writeCsv } from './csv'

export type WritableFormat = 'edf' | 'bdf' | 'csv'
export const WRITABLE_FORMATS: readonly WritableFormat[] = ['edf', 'bdf', 'csv']

/** File extension for a format (for download names). */
export function extensionFor(format: WritableFormat): string {
  return `.${format}`
}

/**
 * Reads EDF, EDF+, BDF, BDF+ or CSV. The magic bytes decide between EDF and BDF (a BDF file
 * named .edf still reads); CSV is taken by its extension (.csv, .txt) or its 'time' header.
 * Anything wrong in the file throws RecordingFormatError and nothing else.
 */
export function readRecording(bytes: Uint8Array, fileName: string, options: CueRule = {}): Recording {
  try {
    const ext = /\.([A-Za-z0-9]+)$/.exec(fileName)?.[1]?.toLowerCase() ?? ''
    const variant = detectVariant(bytes)
    if (variant) return readEdfFamily(bytes, options).recording
    if (ext === 'edf' || ext === 'bdf' || ext === 'rec') {
      if (bytes.length === 0) throw new RecordingFormatError('the file is empty', { format: ext === 'bdf' ? 'bdf' : 'edf', field: 'header', offset: 0 })
      // Let the header parser say exactly what the first bytes are.
      return readEdfFamily(bytes, options).recording
    }
    const startsLikeCsv = /^(\uFEFF)?\s*"?time/i.test(new TextDecoder().decode(bytes.subarray(0, 16)))
    if (ext === 'csv' || ext === 'txt' || startsLikeCsv) return readCsv(bytes, options)
    throw new RecordingFormatError(
      `'${fileName}' is not a recognised recording: expected an EDF/EDF+ (.edf), BDF (.bdf) or CSV (.csv) file`,
      { format: 'unknown', field: 'file name' },
    )
  } catch (e) {
    if (e instanceof RecordingFormatError) throw e
    // A defect of ours must still reach the caller as a format error with the cause kept.
    const err = new RecordingFormatError(`could not read '${fileName}': ${(e as Error)?.message ?? String(e)}`, { format: 'unknown' })
    ;(err as { cause?: unknown }).cause = e
    throw err
  }
}

/** Writes a recording as EDF+C, BDF(+C) or CSV bytes. */
export function writeRecording(recording: Recording, format: WritableFormat): Uint8Array {
  switch (format) {
    case 'edf':
      return writeEdf(recording)
    case 'bdf':
      return writeBdf(recording)
    case 'csv':
      return writeCsv(recording)
    default:
      throw new RecordingFormatError(`unknown format '${String(format)}'; choose edf, bdf or csv`, { format: 'unknown', field: 'format' })
  }
}

