// EDF+ time-stamped annotation lists (TALs), the content of an 'EDF Annotations' (or
// 'BDF Annotations') signal. Grammar from the EDF+ specification (Kemp & Olivan 2003,
// Clin. Neurophysiol. 114:1755), section 2.2.2:
//   TAL   = Onset [0x15 Duration] 0x14 { Text 0x14 } 0x00
//   Onset = ('+' | '-') digits ['.' digits]   (seconds from the file's start time)
// Each data record's annotation bytes begin with a time-keeping TAL (empty text) giving the
// record's start; unused bytes are 0x00.

import { RecordingFormatError, type RecordingFormat } from './errors'

export interface TalAnnotation {
  onsetSeconds: number
  /** undefined when the TAL has no duration field. */
  durationSeconds: number | undefined
  text: string
}

export interface RecordTals {
  /** Start of the data record (seconds), from the time-keeping TAL. */
  recordStartSeconds: number
  annotations: TalAnnotation[]
}

const ONSET = /^[+-](\d+)(\.\d*)?$/
const DURATION = /^(\d+)(\.\d*)?$/
const utf8 = new TextDecoder('utf-8', { fatal: false })
const utf8Encoder = new TextEncoder()

/**
 * Parses one data record's annotation bytes. `fileOffset` is where they start in the file,
 * so an error can point at the byte.
 */
export function parseRecordTals(bytes: Uint8Array, fileOffset: number, recordIndex: number, format: RecordingFormat): RecordTals {
  const fail = (what: string, at: number): never => {
    throw new RecordingFormatError(`annotation in data record ${recordIndex} (byte ${fileOffset + at}): ${what}`, {
      format, field: 'annotations', offset: fileOffset + at,
    })
  }
  let pos = 0
  let recordStart: number | undefined
  const annotations: TalAnnotation[] = []
  while (pos < bytes.length && bytes[pos] !== 0) {
    const talStart = pos
    let end = pos
    while (end < bytes.length && bytes[end] !== 0) end++
    if (end >= bytes.length) fail('TAL is not terminated by a 0 byte', talStart)
    const tal = bytes.subarray(pos, end)
    // Onset and optional duration run up to the first 0x14.
    let sep = tal.indexOf(0x14)
    if (sep < 0) fail('TAL has no 0x14 after its onset', talStart)
    const head = latin1(tal.subarray(0, sep))
    const dur = head.indexOf('\x15')
    const onsetText = dur < 0 ? head : head.slice(0, dur)
    const durationText = dur < 0 ? undefined : head.slice(dur + 1)
    if (!ONSET.test(onsetText)) fail(`onset '${visible(onsetText)}' is not a signed number of seconds`, talStart)
    if (durationText !== undefined && !DURATION.test(durationText)) {
      fail(`duration '${visible(durationText)}' is not a number of seconds`, talStart)
    }
    const onsetSeconds = Number(onsetText)
    const durationSeconds = durationText === undefined ? undefined : Number(durationText)
    const texts: string[] = []
    let from = sep + 1
    while (from < tal.length) {
      sep = tal.indexOf(0x14, from)
      if (sep < 0) fail('annotation text is not closed by 0x14', talStart + from)
      texts.push(utf8.decode(tal.subarray(from, sep)))
      from = sep + 1
    }
    if (recordStart === undefined) {
      // The first TAL of every record keeps time: its first text is empty.
      if (texts.length === 0 || texts[0] !== '') fail('the record does not start with a time-keeping TAL', talStart)
      recordStart = onsetSeconds
      texts.shift()
    }
    for (const text of texts) if (text !== '') annotations.push({ onsetSeconds, durationSeconds, text })
    pos = end + 1
  }
  if (recordStart === undefined) fail('no time-keeping TAL', 0)
  return { recordStartSeconds: recordStart as number, annotations }
}

function latin1(b: Uint8Array): string {
  let s = ''
  for (let i = 0; i < b.length; i++) s += String.fromCharCode(b[i])
  return s
}

function visible(s: string): string {
  const clean = s.replace(/[^\x20-\x7e]/g, '?')
  return clean.length > 24 ? `${clean.slice(0, 24)}...` : clean
}

/** Seconds in TAL notation: sign, no exponent, up to 9 decimals, no trailing zeros. */
export function formatTalSeconds(seconds: number, signed: boolean): string {
  let text = Math.abs(seconds).toFixed(9).replace(/0+$/, '').replace(/\.$/, '')
  if (signed) text = (seconds < 0 && text !== '0' ? '-' : '+') + text
  return text
}

/** Bytes of one record's annotations: time-keeping TAL first, then one TAL per annotation. */
export function encodeRecordTals(recordStartSeconds: number, annotations: readonly TalAnnotation[]): Uint8Array {
  const parts: number[] = []
  const push = (s: string) => { for (const b of utf8Encoder.encode(s)) parts.push(b) }
  push(`${formatTalSeconds(recordStartSeconds, true)}\x14\x14\x00`)
  for (const a of annotations) {
    // Separators inside text would break the TAL grammar.
    const text = a.text.replace(/[\x00\x14\x15]/g, ' ')
    push(formatTalSeconds(a.onsetSeconds, true))
    if (a.durationSeconds !== undefined) push(`\x15${formatTalSeconds(a.durationSeconds, false)}`)
    push(`\x14${text}\x14\x00`)
  }
  return Uint8Array.from(parts)
}
