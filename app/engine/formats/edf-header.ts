// Header of EDF, EDF+ and BDF files: layout from the EDF specification (Kemp et al. 1992,
// Electroenceph. clin. Neurophysiol. 82:391), EDF+ (Kemp & Olivan 2003, Clin. Neurophysiol.
// 114:1755) and BioSemi's 24-bit variant (BDF: first byte 0xFF, 'BIOSEMI', '24BIT').
// Every field is checked; errors name the field and its byte offset.

import { RecordingFormatError } from './errors'
import { fieldNumber, fieldText, printable } from './header-fields'

export type EdfVariant = 'edf' | 'bdf'

export interface EdfSignalHeader {
  label: string
  transducer: string
  physicalDimension: string
  physicalMin: number
  physicalMax: number
  digitalMin: number
  digitalMax: number
  prefiltering: string
  samplesPerRecord: number
  /** An 'EDF Annotations' / 'BDF Annotations' signal (EDF+ / BDF+). */
  isAnnotations: boolean
  /** Byte offset of this signal inside one data record. */
  offsetInRecord: number
}

export interface EdfHeader {
  variant: EdfVariant
  /** EDF+/BDF+ continuity from the reserved field; 'none' for plain EDF/BDF. */
  plus: 'none' | 'C' | 'D'
  patientField: string
  recordingField: string
  startDate?: Date
  headerBytes: number
  /** -1 when the writer did not know (allowed by the specification while recording). */
  recordCount: number
  recordDurationSeconds: number
  signals: EdfSignalHeader[]
  /** Bytes in one data record, all signals. */
  recordBytes: number
  bytesPerSample: 2 | 3
}

/** Byte layout of the fixed part (offset, length). */
export const FIXED = {
  version: [0, 8], patient: [8, 80], recording: [88, 80], startDate: [168, 8], startTime: [176, 8],
  headerBytes: [184, 8], reserved: [192, 44], recordCount: [236, 8], recordDuration: [244, 8], signalCount: [252, 4],
} as const

/** Per-signal field widths in the order they follow the fixed part (each repeated ns times). */
export const SIGNAL_FIELDS = [
  ['label', 16], ['transducer', 80], ['physical dimension', 8], ['physical minimum', 8], ['physical maximum', 8],
  ['digital minimum', 8], ['digital maximum', 8], ['prefiltering', 80], ['samples per data record', 8], ['reserved', 32],
] as const

export const FIXED_HEADER_BYTES = 256
/** Largest data record Tiller reads; far above any real EEG file, low enough never to exhaust memory. */
export const MAX_RECORD_BYTES = 64 * 1024 * 1024
export const MAX_SIGNALS = 9999 // the 4-character field's limit

export const DIGITAL_RANGE: Record<EdfVariant, [number, number]> = {
  edf: [-32768, 32767],
  bdf: [-8388608, 8388607],
}

/** Which variant the first 8 bytes announce, or undefined. */
export function detectVariant(bytes: Uint8Array): EdfVariant | undefined {
  if (bytes.length < 8) return undefined
  if (bytes[0] === 0xff && fieldText(bytes, 1, 7) === 'BIOSEMI') return 'bdf'
  if (fieldText(bytes, 0, 8) === '0') return 'edf'
  return undefined
}

/** Parses the 256-byte fixed part; tells how many bytes the whole header needs. */
export function parseFixedHeader(bytes: Uint8Array): Omit<EdfHeader, 'signals' | 'recordBytes'> & { signalCount: number } {
  const variant = detectVariant(bytes)
  if (!variant) {
    const seen = Array.from(bytes.subarray(0, 8), (b) => b.toString(16).padStart(2, '0')).join(' ')
    throw new RecordingFormatError(
      `version field (header bytes 0-7) is [${seen}]; an EDF file starts with '0' and 7 spaces, a BDF file with 0xFF 'BIOSEMI'`,
      { format: 'unknown', field: 'version', offset: 0 },
    )
  }
  const format = variant
  const reserved = fieldText(bytes, ...FIXED.reserved)
  let plus: EdfHeader['plus'] = 'none'
  if (/^(EDF|BDF)\+C/.test(reserved)) plus = 'C'
  else if (/^(EDF|BDF)\+D/.test(reserved)) plus = 'D'
  const signalCount = fieldNumber(bytes, ...FIXED.signalCount, 'number of signals', format, { integer: true, min: 1, max: MAX_SIGNALS })
  const headerBytes = fieldNumber(bytes, ...FIXED.headerBytes, 'number of header bytes', format, { integer: true })
  const expected = FIXED_HEADER_BYTES * (signalCount + 1)
  if (headerBytes !== expected) {
    throw new RecordingFormatError(
      `number of header bytes (header byte ${FIXED.headerBytes[0]}) is ${headerBytes}, but ${signalCount} signals need 256 x ${signalCount + 1} = ${expected}`,
      { format, field: 'number of header bytes', offset: FIXED.headerBytes[0] },
    )
  }
  const recordCount = fieldNumber(bytes, ...FIXED.recordCount, 'number of data records', format, { integer: true, min: -1 })
  const recordDurationSeconds = fieldNumber(bytes, ...FIXED.recordDuration, 'duration of a data record', format, { min: 0 })
  return {
    variant, plus, signalCount, headerBytes, recordCount, recordDurationSeconds,
    patientField: fieldText(bytes, ...FIXED.patient).trim(),
    recordingField: fieldText(bytes, ...FIXED.recording).trim(),
    startDate: parseStart(fieldText(bytes, ...FIXED.startDate), fieldText(bytes, ...FIXED.startTime)),
    bytesPerSample: variant === 'bdf' ? 3 : 2,
  }
}

/** Parses the complete header (fixed part + ns signal blocks). */
export function parseHeader(bytes: Uint8Array): EdfHeader {
  const fixed = parseFixedHeader(bytes)
  const { signalCount: ns, variant: format } = fixed
  if (bytes.length < fixed.headerBytes) {
    throw new RecordingFormatError(`file ends inside the header: ${bytes.length} of ${fixed.headerBytes} header bytes`, {
      format, field: 'header', offset: bytes.length,
    })
  }
  const fieldOffset: number[] = []
  let at = FIXED_HEADER_BYTES
  for (const [, width] of SIGNAL_FIELDS) {
    fieldOffset.push(at)
    at += width * ns
  }
  const [dLow, dHigh] = DIGITAL_RANGE[format]
  const signals: EdfSignalHeader[] = []
  let offsetInRecord = 0
  for (let s = 0; s < ns; s++) {
    const text = (f: number) => fieldText(bytes, fieldOffset[f] + s * SIGNAL_FIELDS[f][1], SIGNAL_FIELDS[f][1])
    const num = (f: number, rule: Parameters<typeof fieldNumber>[5] = {}) =>
      fieldNumber(bytes, fieldOffset[f] + s * SIGNAL_FIELDS[f][1], SIGNAL_FIELDS[f][1], `${SIGNAL_FIELDS[f][0]} of signal ${s + 1}`, format, rule)
    const label = text(0).trim()
    const isAnnotations = label === 'EDF Annotations' || label === 'BDF Annotations'
    // Limits beyond 1e20 (in any unit) could scale samples past float32; no recording has them.
    const physicalMin = num(3, { min: -1e20, max: 1e20 })
    const physicalMax = num(4, { min: -1e20, max: 1e20 })
    const digitalMin = num(5, { integer: true, min: dLow, max: dHigh })
    const digitalMax = num(6, { integer: true, min: dLow, max: dHigh })
    const samplesPerRecord = num(8, { integer: true, min: 1 })
    const where = `signal ${s + 1} ('${printable(label)}')`
    if (digitalMax <= digitalMin) {
      throw new RecordingFormatError(`${where}: digital maximum ${digitalMax} is not above digital minimum ${digitalMin}`, {
        format, field: 'digital maximum', offset: fieldOffset[6] + s * 8,
      })
    }
    if (physicalMax === physicalMin && !isAnnotations) {
      throw new RecordingFormatError(`${where}: physical maximum equals physical minimum (${physicalMin}), so samples cannot be scaled`, {
        format, field: 'physical maximum', offset: fieldOffset[4] + s * 8,
      })
    }
    signals.push({
      label, transducer: text(1).trim(), physicalDimension: text(2).trim(), physicalMin, physicalMax,
      digitalMin, digitalMax, prefiltering: text(7).trim(), samplesPerRecord, isAnnotations, offsetInRecord,
    })
    offsetInRecord += samplesPerRecord * fixed.bytesPerSample
    if (offsetInRecord > MAX_RECORD_BYTES) {
      throw new RecordingFormatError(
        `samples per data record: one data record would hold ${offsetInRecord} bytes or more, above the ${MAX_RECORD_BYTES}-byte limit`,
        { format, field: 'samples per data record', offset: fieldOffset[8] + s * 8 },
      )
    }
  }
  const hasData = signals.some((sig) => !sig.isAnnotations)
  if (hasData && !(fixed.recordDurationSeconds > 0)) {
    throw new RecordingFormatError(`duration of a data record (header byte ${FIXED.recordDuration[0]}) is 0 but the file has signals`, {
      format, field: 'duration of a data record', offset: FIXED.recordDuration[0],
    })
  }
  if (fixed.plus !== 'none' && !signals.some((sig) => sig.isAnnotations)) {
    throw new RecordingFormatError(`the reserved field says ${format.toUpperCase()}+ but no signal is labelled '${format === 'bdf' ? 'BDF' : 'EDF'} Annotations'`, {
      format, field: 'reserved', offset: FIXED.reserved[0],
    })
  }
  const { signalCount: _ns, ...rest } = fixed
  return { ...rest, signals, recordBytes: offsetInRecord }
}

/** dd.mm.yy + hh.mm.ss as UTC (EDF stores local time without zone; we keep the digits). */
function parseStart(date: string, time: string): Date | undefined {
  const d = /^(\d\d)\.(\d\d)\.(\d\d)$/.exec(date.trim())
  const t = /^(\d\d)\.(\d\d)\.(\d\d)$/.exec(time.trim())
  if (!d || !t) return undefined
  const yy = Number(d[3])
  // EDF specification (clipping date): 85-99 are 1985-1999, 00-84 are 2000-2084.
  const year = yy >= 85 ? 1900 + yy : 2000 + yy
  const [day, month] = [Number(d[1]), Number(d[2])]
  const [h, m, s] = [Number(t[1]), Number(t[2]), Number(t[3])]
  if (month < 1 || month > 12 || day < 1 || day > 31 || h > 23 || m > 59 || s > 59) return undefined
  const out = new Date(Date.UTC(year, month - 1, day, h, m, s))
  return out.getUTCDate() === day ? out : undefined
}
