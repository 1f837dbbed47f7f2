// Fixed-width ASCII header fields of EDF / EDF+ / BDF: reading with validation, writing with
// padding, and numbers that must fit their field width exactly as the reader will see them.

import { RecordingFormatError, type RecordingFormat } from './errors'

/** Latin-1 decode of a header field, right-trimmed of spaces (EDF pads with spaces). */
export function fieldText(bytes: Uint8Array, offset: number, length: number): string {
  let s = ''
  for (let i = 0; i < length; i++) s += String.fromCharCode(bytes[offset + i])
  return s.replace(/[\s\0]+$/, '')
}

/** A numeric header field; the error names the field and its byte offset. */
export function fieldNumber(
  bytes: Uint8Array, offset: number, length: number, field: string, format: RecordingFormat,
  rule: { integer?: boolean; min?: number; max?: number } = {},
): number {
  const raw = fieldText(bytes, offset, length).trim()
  // Plain decimal notation as EDF writes it; no hex, no exponent surprises like 'Infinity'.
  const ok = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(raw)
  const value = ok ? Number(raw) : NaN
  const where = `${field} (header byte ${offset})`
  if (!Number.isFinite(value)) {
    throw new RecordingFormatError(`${where} is '${printable(raw)}', not a number`, { format, field, offset })
  }
  if (rule.integer && !Number.isInteger(value)) {
    throw new RecordingFormatError(`${where} is ${raw}, expected a whole number`, { format, field, offset })
  }
  if (rule.min !== undefined && value < rule.min) {
    throw new RecordingFormatError(`${where} is ${raw}, expected at least ${rule.min}`, { format, field, offset })
  }
  if (rule.max !== undefined && value > rule.max) {
    throw new RecordingFormatError(`${where} is ${raw}, expected at most ${rule.max}`, { format, field, offset })
  }
  return value
}

/** Shows a bad value safely inside an error message. */
export function printable(s: string, max = 24): string {
  const clean = s.replace(/[^\x20-\x7e]/g, '?')
  return clean.length > max ? `${clean.slice(0, max)}...` : clean
}

/** Writes `text` left-aligned, space-padded, into a field; refuses what would not fit. */
export function writeField(
  out: Uint8Array, offset: number, length: number, text: string, field: string, format: RecordingFormat,
): void {
  if (text.length > length) {
    throw new RecordingFormatError(`${field} '${printable(text, 40)}' is longer than its ${length}-character field`, { format, field })
  }
  for (let i = 0; i < length; i++) {
    const c = i < text.length ? text.charCodeAt(i) : 0x20
    if (c < 0x20 || c > 0x7e) {
      throw new RecordingFormatError(`${field} '${printable(text, 40)}' has a character outside printable ASCII`, { format, field })
    }
    out[offset + i] = c
  }
}

/** Header-safe text: printable ASCII only (EDF header rule), other characters become '_'. */
export function asciiOnly(text: string): string {
  return text.replace(/[^\x20-\x7e]/g, '_')
}

/**
 * The decimal text (at most `width` characters) of a number at or beyond `value` in the
 * given direction, so physical minimum/maximum round outward and never clip a sample.
 */
export function fitNumber(value: number, width: number, direction: 'down' | 'up', format: RecordingFormat, field: string): string {
  for (let decimals = width; decimals >= 0; decimals--) {
    const f = 10 ** decimals
    const rounded = direction === 'down' ? Math.floor(value * f) / f : Math.ceil(value * f) / f
    let text = rounded.toFixed(decimals)
    if (decimals > 0) text = text.replace(/0+$/, '').replace(/\.$/, '')
    if (text === '-0') text = '0'
    if (text.length <= width && (direction === 'down' ? Number(text) <= value : Number(text) >= value)) return text
  }
  throw new RecordingFormatError(`${field} ${value} does not fit in ${width} characters`, { format, field })
}
