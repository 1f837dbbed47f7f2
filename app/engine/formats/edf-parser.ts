// Incremental reader for EDF, EDF+ and BDF (BDF+): bytes go in as they arrive (an upload,
// a file stream) and are decoded record by record into the channel arrays, so the raw file
// is never held whole beside the decoded samples. `readEdfFamily` runs the same parser over
// a complete buffer.

import type { Annotation, Cue, Recording } from '../recording'
import {
  FIXED_HEADER_BYTES, parseFixedHeader, parseHeader, type EdfHeader, type EdfSignalHeader,
} from './edf-header'
import { RecordingFormatError } from './errors'
import { parseRecordTals, type TalAnnotation } from './tal'
import { cuesFromAnnotations, type CueRule } from './cue-rule'

export interface EdfReadOptions extends CueRule {
  /**
   * Total size of the file if known (e.g. an upload's Content-Length): lets the parser
   * reject a truncated or padded file before decoding it and size its arrays exactly.
   */
  expectedBytes?: number
}

export interface SkippedSignal {
  label: string
  reason: string
}

export interface EdfReadResult {
  recording: Recording
  header: EdfHeader
  /** Signals not in the recording (a different sampling rate than the EEG channels). */
  skippedSignals: SkippedSignal[]
}

export interface EdfParser {
  /** Feed the next bytes of the file; throws RecordingFormatError as soon as they are wrong. */
  push(chunk: Uint8Array): void
  /** The file is complete: checks it and returns the recording. */
  end(): Recording
  /** As end(), with the header and the signals that were left out. */
  endWithDetails(): EdfReadResult
  /** The parsed header, once enough bytes have arrived. */
  readonly header: EdfHeader | undefined
}

interface ChannelStore {
  signal: EdfSignalHeader
  gain: number
  offset: number
  data: Float32Array
}

/** Microvolts per physical unit; unknown units are taken as microvolts (EEG's usual unit). */
function microvoltsPer(dimension: string): number {
  const d = dimension.trim().replace('\u00b5', 'u').toLowerCase()
  if (d === 'mv') return 1e3
  if (d === 'v') return 1e6
  if (d === 'nv') return 1e-3
  return 1
}

export function createEdfParser(options: EdfReadOptions = {}): EdfParser {
  let headerBuf = new Uint8Array(FIXED_HEADER_BYTES)
  let headerFill = 0
  let header: EdfHeader | undefined
  let bytesSeen = 0
  let recordBuf: Uint8Array | undefined
  let recordFill = 0
  let records = 0
  let stores: ChannelStore[] = []
  let skipped: SkippedSignal[] = []
  let annotationSignals: EdfSignalHeader[] = []
  let samplesPerRecord = 0
  let firstRecordStart: number | undefined
  const tals: TalAnnotation[] = []
  let finished = false
  const format = () => header?.variant ?? 'unknown'

  function fail(message: string, field: string, offset?: number): never {
    throw new RecordingFormatError(message, { format: format(), field, offset })
  }

  function onHeader(h: EdfHeader): void {
    header = h
    // BioSemi's 'Status' channel carries trigger bits, not microvolts: decoding it is out of
    // scope, and as an EEG channel it would wreck any spatial filter, so it is set aside.
    const isTriggerChannel = (s: EdfSignalHeader) => h.variant === 'bdf' && /^status$/i.test(s.label)
    const triggers = h.signals.filter(isTriggerChannel)
    const data = h.signals.filter((s) => !s.isAnnotations && !isTriggerChannel(s))
    annotationSignals = h.signals.filter((s) => s.isAnnotations)
    // One recording has one rate: keep the signals sharing the most common rate (ties: the
    // higher), list the others as skipped rather than resample them silently.
    const counts = new Map<number, number>()
    for (const s of data) counts.set(s.samplesPerRecord, (counts.get(s.samplesPerRecord) ?? 0) + 1)
    let best = 0
    for (const [spr, n] of counts) if (n > (counts.get(best) ?? 0) || (n === counts.get(best) && spr > best)) best = spr
    samplesPerRecord = best
    const rate = (spr: number) => spr / h.recordDurationSeconds
    skipped = [
      ...triggers.map((s) => ({ label: s.label, reason: 'BioSemi trigger channel (trigger bits are not decoded)' })),
      ...data.filter((s) => s.samplesPerRecord !== best).map((s) => ({
        label: s.label, reason: `sampled at ${rate(s.samplesPerRecord)} Hz, the other channels at ${rate(best)} Hz`,
      })),
    ]
    if (options.expectedBytes !== undefined) {
      const body = options.expectedBytes - h.headerBytes
      const whole = Math.floor(body / h.recordBytes)
      const rest = body - whole * h.recordBytes
      if (body < 0) fail(`file ends inside the header: ${options.expectedBytes} of ${h.headerBytes} header bytes`, 'header', options.expectedBytes)
      if (h.recordCount >= 0 && whole < h.recordCount) {
        fail(`truncated: the header declares ${h.recordCount} data records of ${h.recordBytes} bytes, the file holds ${whole}` +
          (rest > 0 ? ` and ${rest} bytes of the next` : ''), 'number of data records', h.headerBytes + whole * h.recordBytes)
      }
    }
    const knownRecords = options.expectedBytes !== undefined
      ? Math.floor((options.expectedBytes - h.headerBytes) / h.recordBytes)
      : h.recordCount >= 0 ? Math.min(h.recordCount, 64) : 64
    // Arrays grow with the data that actually arrives, so a header that lies about its size
    // cannot make the parser allocate more than the file holds.
    const capacityRecords = Math.max(0, h.recordCount >= 0 ? Math.min(h.recordCount, knownRecords) : knownRecords)
    const usedLabels = new Map<string, number>()
    stores = data.filter((s) => s.samplesPerRecord === best).map((s, i) => {
      const gain = ((s.physicalMax - s.physicalMin) / (s.digitalMax - s.digitalMin)) * microvoltsPer(s.physicalDimension)
      const offset = s.physicalMin * microvoltsPer(s.physicalDimension) - s.digitalMin * gain
      // Duplicate or empty labels would make channels ambiguous downstream.
      let label = s.label === '' ? `signal ${i + 1}` : s.label
      const n = (usedLabels.get(label) ?? 0) + 1
      usedLabels.set(label, n)
      if (n > 1) label = `${label}-${n}`
      return { signal: { ...s, label }, gain, offset, data: new Float32Array(capacityRecords * best) }
    })
  }

  function ensureCapacity(recordIndex: number): void {
    const needed = (recordIndex + 1) * samplesPerRecord
    for (const st of stores) {
      if (st.data.length >= needed) continue
      let cap = Math.max(needed, st.data.length * 2)
      if (header && header.recordCount >= 0) cap = Math.min(cap, header.recordCount * samplesPerRecord)
      const grown = new Float32Array(Math.max(cap, needed))
      grown.set(st.data)
      st.data = grown
    }
  }

  function decodeRecord(rec: Uint8Array, fileOffset: number): void {
    const h = header as EdfHeader
    ensureCapacity(records)
    const base = records * samplesPerRecord
    for (const st of stores) {
      const out = st.data
      const { gain, offset } = st
      let p = st.signal.offsetInRecord
      if (h.bytesPerSample === 2) {
        for (let i = 0; i < samplesPerRecord; i++, p += 2) out[base + i] = (((rec[p] | (rec[p + 1] << 8)) << 16) >> 16) * gain + offset
      } else {
        for (let i = 0; i < samplesPerRecord; i++, p += 3) {
          out[base + i] = (((rec[p] | (rec[p + 1] << 8) | (rec[p + 2] << 16)) << 8) >> 8) * gain + offset
        }
      }
    }
    annotationSignals.forEach((sig, k) => {
      const bytes = rec.subarray(sig.offsetInRecord, sig.offsetInRecord + sig.samplesPerRecord * h.bytesPerSample)
      const at = fileOffset + sig.offsetInRecord
      if (k === 0) {
        const parsed = parseRecordTals(bytes, at, records, h.variant)
        checkContinuity(parsed.recordStartSeconds, at)
        for (const a of parsed.annotations) tals.push(a)
      } else {
        // Only the first annotation signal carries the time-keeping TAL (EDF+ spec 2.2.4).
        for (const a of parseOtherTals(bytes, at, records, h.variant)) tals.push(a)
      }
    })
    records++
  }

  function checkContinuity(start: number, at: number): void {
    const h = header as EdfHeader
    if (firstRecordStart === undefined) {
      firstRecordStart = start
      return
    }
    const expected = firstRecordStart + records * h.recordDurationSeconds
    if (Math.abs(start - expected) > 1e-6 + 1e-9 * Math.abs(expected)) {
      fail(`data record ${records} starts at ${start} s, not ${expected} s: the recording is discontinuous` +
        ` (${h.plus === 'D' ? 'EDF+D' : 'gap in an EDF+C file'}); Tiller reads continuous recordings only`, 'annotations', at)
    }
  }

  function push(chunk: Uint8Array): void {
    if (finished) throw new RecordingFormatError('push() after end()', { format: format(), field: 'parser' })
    let pos = 0
    while (pos < chunk.length) {
      if (!header) {
        const want = headerBuf.length - headerFill
        const take = Math.min(want, chunk.length - pos)
        headerBuf.set(chunk.subarray(pos, pos + take), headerFill)
        headerFill += take
        pos += take
        bytesSeen += take
        if (headerFill < headerBuf.length) continue
        if (headerBuf.length === FIXED_HEADER_BYTES) {
          const fixed = parseFixedHeader(headerBuf)
          if (fixed.headerBytes > FIXED_HEADER_BYTES) {
            const grown = new Uint8Array(fixed.headerBytes)
            grown.set(headerBuf)
            headerBuf = grown
            continue
          }
        }
        onHeader(parseHeader(headerBuf))
        headerBuf = new Uint8Array(0)
        continue
      }
      const h = header
      if (h.recordCount >= 0 && records >= h.recordCount) {
        fail(`the file continues past the ${h.recordCount} data records its header declares (extra bytes from byte ${bytesSeen})`,
          'number of data records', bytesSeen)
      }
      const remaining = chunk.length - pos
      if (recordFill === 0 && remaining >= h.recordBytes) {
        // Whole record inside the chunk: decode in place, no copy.
        decodeRecord(chunk.subarray(pos, pos + h.recordBytes), bytesSeen)
        pos += h.recordBytes
        bytesSeen += h.recordBytes
        continue
      }
      // A record split across chunks is gathered in one reusable buffer, made when first needed.
      recordBuf ??= new Uint8Array(h.recordBytes)
      const rb = recordBuf
      const take = Math.min(h.recordBytes - recordFill, remaining)
      rb.set(chunk.subarray(pos, pos + take), recordFill)
      recordFill += take
      pos += take
      bytesSeen += take
      if (recordFill === h.recordBytes) {
        decodeRecord(rb, bytesSeen - h.recordBytes)
        recordFill = 0
      }
    }
  }

  function endWithDetails(): EdfReadResult {
    if (finished) throw new RecordingFormatError('end() called twice', { format: format(), field: 'parser' })
    finished = true
    if (!header) {
      const need = headerBuf.length
      fail(bytesSeen === 0 ? 'the file is empty' : `file ends inside the header: ${headerFill} of ${need === FIXED_HEADER_BYTES ? 'at least 256' : need} header bytes`,
        'header', bytesSeen)
    }
    const h = header
    if (recordFill > 0) {
      fail(`truncated: data record ${records} has ${recordFill} of its ${h.recordBytes} bytes` +
        (h.recordCount >= 0 ? ` (the header declares ${h.recordCount} data records, ${records} are complete)` : ''),
        'data record', bytesSeen - recordFill)
    }
    if (h.recordCount >= 0 && records < h.recordCount) {
      fail(`truncated: the header declares ${h.recordCount} data records, the file holds ${records}`, 'number of data records', bytesSeen)
    }
    if (stores.length === 0) {
      fail(`the file has no signal channels to read (${skipped.length > 0 ? 'only skipped signals' : 'annotations only'})`, 'signals', FIXED_HEADER_BYTES)
    }
    const n = records * samplesPerRecord
    // 254 samples in '1.016' s is 250 Hz, not 250.00000000000003: drop the division's noise.
    const rateHz = Number((samplesPerRecord / h.recordDurationSeconds).toPrecision(12))
    const data = stores.map((st) => (st.data.length === n ? st.data : st.data.slice(0, n)))
    const channels = stores.map((st) => st.signal.label)
    stores = []
    const start = firstRecordStart ?? 0
    const relative: Annotation[] = tals.map((t) => ({
      onsetSeconds: t.onsetSeconds - start, durationSeconds: t.durationSeconds ?? 0, text: t.text,
    }))
    const split = samplesPerRecord > 0
      ? cuesFromAnnotations(relative, tals.map((t) => t.durationSeconds === undefined), rateHz, n, options)
      : { cues: [] as Cue[], annotations: relative }
    const recording: Recording = {
      channels,
      rateHz: samplesPerRecord > 0 ? rateHz : 0,
      data,
      cues: split.cues,
      annotations: split.annotations,
      meta: metaFrom(h),
    }
    return { recording, header: h, skippedSignals: skipped }
  }

  return {
    push,
    end: () => endWithDetails().recording,
    endWithDetails,
    get header() {
      return header
    },
  }
}

/** TALs of a second or later annotation signal: no time-keeping TAL is required. */
function parseOtherTals(bytes: Uint8Array, at: number, record: number, format: 'edf' | 'bdf'): TalAnnotation[] {
  // Prefix a synthetic time-keeping TAL so one grammar serves both cases.
  const prefix = [0x2b, 0x30, 0x14, 0x14, 0x00]
  const joined = new Uint8Array(prefix.length + bytes.length)
  joined.set(prefix)
  joined.set(bytes, prefix.length)
  return parseRecordTals(joined, at - prefix.length, record, format).annotations
}

/** EDF+ subfields: patient 'code sex birthdate name', recording 'Startdate date code ...'. */
function metaFrom(h: EdfHeader): Recording['meta'] {
  const meta: NonNullable<Recording['meta']> = {}
  const patient = h.patientField.split(' ')
  const recording = h.recordingField.split(' ')
  if (h.plus !== 'none' && patient.length >= 4) {
    if (patient[0] !== 'X') meta.patientId = patient[0]
  } else if (h.patientField !== '') meta.patientId = h.patientField
  if (h.plus !== 'none' && recording[0] === 'Startdate' && recording.length >= 3) {
    if (recording[2] !== 'X') meta.recordingId = recording[2]
  } else if (h.recordingField !== '') meta.recordingId = h.recordingField
  if (h.startDate) meta.startDate = h.startDate
  return meta
}

/** Reads a complete EDF/BDF file held in memory. */
export function readEdfFamily(bytes: Uint8Array, options: CueRule = {}): EdfReadResult {
  const parser = createEdfParser({ ...options, expectedBytes: bytes.length })
  parser.push(bytes)
  return parser.endWithDetails()
}
