// Writes a Recording as EDF+C (16-bit) or BDF (24-bit; BDF+C when it carries annotations),
// following the EDF/EDF+ specifications. Cues become annotations whose text is the class
// name with no duration field; other annotations keep their duration.

import { sampleCount, type Recording } from '../recording'
import { DIGITAL_RANGE, FIXED, FIXED_HEADER_BYTES, SIGNAL_FIELDS, type EdfVariant } from './edf-header'
import { RecordingFormatError } from './errors'
import { asciiOnly, fitNumber, writeField } from './header-fields'
import { encodeRecordTals, type TalAnnotation } from './tal'

/** The EDF specification recommends data records of at most 61440 bytes. */
const RECOMMENDED_RECORD_BYTES = 61440
const PREFERRED_DURATIONS = [1, 0.5, 0.25, 0.2, 0.1, 0.05, 2, 4, 5, 10]
const MONTHS = ['JAN', 'FEB', 'MAR', 'APR', 'MAY', 'JUN', 'JUL', 'AUG', 'SEP', 'OCT', 'NOV', 'DEC']

export interface RecordLayout {
  samplesPerRecord: number
  durationText: string
  recordCount: number
}

/**
 * Picks the data-record length: samples per record must be a whole number, the duration must
 * print exactly in 8 characters, the record should stay under the recommended size, and,
 * when possible, the records should divide the recording exactly (no padding). Without an
 * exact division the last record is padded by repeating each channel's last sample.
 */
export function chooseRecordLayout(rateHz: number, samples: number, channels: number, bytesPerSample: number, format: EdfVariant): RecordLayout {
  const fits = (spr: number) => spr * channels * bytesPerSample <= RECOMMENDED_RECORD_BYTES
  const exactText = (spr: number): string | undefined => {
    const d = spr / rateHz
    for (let decimals = 0; decimals <= 7; decimals++) {
      const text = d.toFixed(decimals)
      if (text.length <= 8 && Math.abs(Number(text) * rateHz - spr) < 1e-9 * spr) return decimals > 0 ? text.replace(/0+$/, '').replace(/\.$/, '') : text
    }
    return undefined
  }
  type Option = { spr: number; text: string }
  const options: Option[] = []
  for (const d of PREFERRED_DURATIONS) {
    const spr = Math.round(rateHz * d)
    const text = spr >= 1 && Math.abs(spr - rateHz * d) < 1e-9 ? exactText(spr) : undefined
    if (text !== undefined) options.push({ spr, text })
  }
  const divides = (o: Option) => samples > 0 && samples % o.spr === 0
  let pick = options.find((o) => fits(o.spr) && divides(o))
  if (!pick && samples > 0) {
    // Any divisor of the sample count near one second whose duration prints exactly.
    let best: Option | undefined
    const lo = Math.max(1, Math.ceil(rateHz * 0.05))
    const hi = Math.min(samples, Math.floor(rateHz * 10))
    for (let spr = lo; spr <= hi; spr++) {
      if (samples % spr !== 0 || !fits(spr)) continue
      const text = exactText(spr)
      if (text !== undefined && (!best || Math.abs(spr - rateHz) < Math.abs(best.spr - rateHz))) best = { spr, text }
    }
    pick = best
  }
  pick ??= options.find((o) => fits(o.spr)) ?? options[0]
  if (!pick) {
    throw new RecordingFormatError(`sampling rate ${rateHz} Hz gives no whole number of samples per data record of a printable duration`, {
      format, field: 'duration of a data record',
    })
  }
  return { samplesPerRecord: pick.spr, durationText: pick.text, recordCount: Math.max(1, Math.ceil(samples / pick.spr)) }
}

function checkRecording(rec: Recording, format: EdfVariant): void {
  const fail = (m: string, field: string) => { throw new RecordingFormatError(m, { format, field }) }
  if (rec.channels.length === 0) fail('the recording has no channels', 'channels')
  if (rec.channels.length !== rec.data.length) fail(`${rec.channels.length} channel names but ${rec.data.length} data arrays`, 'channels')
  if (rec.channels.length > 9998) fail(`${rec.channels.length} channels: EDF holds at most 9998 plus the annotation signal`, 'channels')
  if (!(rec.rateHz > 0) || !Number.isFinite(rec.rateHz)) fail(`sampling rate ${rec.rateHz} Hz is not a positive number`, 'rateHz')
  const n = sampleCount(rec)
  rec.data.forEach((d, i) => {
    if (d.length !== n) fail(`channel ${rec.channels[i]} has ${d.length} samples, channel ${rec.channels[0]} has ${n}`, rec.channels[i])
  })
  const seen = new Set<string>()
  for (const name of rec.channels) {
    if (name.length > 16) fail(`channel name '${name}' is longer than the 16 characters of an EDF label`, name)
    if (/[^\x20-\x7e]/.test(name)) fail(`channel name '${name}' has characters outside printable ASCII (EDF header rule)`, name)
    if (name.trim() === '') fail('a channel name is empty', 'channels')
    if (name.trim() === 'EDF Annotations' || name.trim() === 'BDF Annotations') fail(`channel name '${name}' is reserved for annotations`, name)
    if (seen.has(name)) fail(`channel name '${name}' appears twice`, name)
    seen.add(name)
  }
}

function edfDate(d: Date): { date: string; time: string; plus: string } {
  const two = (n: number) => String(n).padStart(2, '0')
  return {
    date: `${two(d.getUTCDate())}.${two(d.getUTCMonth() + 1)}.${two(d.getUTCFullYear() % 100)}`,
    time: `${two(d.getUTCHours())}.${two(d.getUTCMinutes())}.${two(d.getUTCSeconds())}`,
    plus: `${two(d.getUTCDate())}-${MONTHS[d.getUTCMonth()]}-${d.getUTCFullYear()}`,
  }
}

/** An EDF+ subfield: no spaces inside (the specification's rule), 'X' when unknown. */
function subfield(text: string | undefined): string {
  const t = asciiOnly(text ?? '').trim().replace(/\s+/g, '_')
  return t === '' ? 'X' : t
}

export function writeEdfFamily(rec: Recording, variant: EdfVariant): Uint8Array {
  const format = variant
  checkRecording(rec, format)
  const bytesPerSample = variant === 'bdf' ? 3 : 2
  const n = sampleCount(rec)
  const ns = rec.channels.length
  const layout = chooseRecordLayout(rec.rateHz, n, ns, bytesPerSample, format)
  const { samplesPerRecord: spr, recordCount } = layout
  const recordSeconds = spr / rec.rateHz
  const [dMin, dMax] = DIGITAL_RANGE[variant]

  // Annotations per data record (each in the record holding its onset).
  const perRecord: TalAnnotation[][] = Array.from({ length: recordCount }, () => [])
  const place = (onsetSeconds: number, a: TalAnnotation) => {
    const r = Math.min(recordCount - 1, Math.max(0, Math.floor(onsetSeconds / recordSeconds + 1e-9)))
    perRecord[r].push(a)
  }
  for (const c of rec.cues) {
    if (!Number.isFinite(c.sample)) throw new RecordingFormatError(`cue '${c.label}' has sample ${c.sample}`, { format, field: 'cues' })
    place(c.sample / rec.rateHz, { onsetSeconds: c.sample / rec.rateHz, durationSeconds: undefined, text: c.label })
  }
  for (const a of rec.annotations) {
    if (!Number.isFinite(a.onsetSeconds) || !Number.isFinite(a.durationSeconds) || a.durationSeconds < 0) {
      throw new RecordingFormatError(`annotation '${a.text}' has onset ${a.onsetSeconds} s, duration ${a.durationSeconds} s`, { format, field: 'annotations' })
    }
    place(a.onsetSeconds, { onsetSeconds: a.onsetSeconds, durationSeconds: a.durationSeconds, text: a.text })
  }
  const hasAnnotations = rec.cues.length + rec.annotations.length > 0
  // EDF+ always (its annotation signal costs little and tells readers the file is continuous);
  // BDF stays plain BioSemi '24BIT' unless there is something to annotate.
  const withAnnotationSignal = variant === 'edf' || hasAnnotations
  const encodedTals = withAnnotationSignal
    ? perRecord.map((list, r) => encodeRecordTals(r * recordSeconds, list))
    : []
  const annotationSamples = withAnnotationSignal
    ? encodedTals.reduce((m, b) => Math.max(m, Math.ceil(b.length / bytesPerSample)), Math.ceil(16 / bytesPerSample))
    : 0
  const signalCount = ns + (withAnnotationSignal ? 1 : 0)
  const headerBytes = FIXED_HEADER_BYTES * (signalCount + 1)
  const recordBytes = (ns * spr + annotationSamples) * bytesPerSample
  const total = headerBytes + recordCount * recordBytes
  if (!Number.isSafeInteger(total) || total > 2 ** 31) {
    throw new RecordingFormatError(`the file would be ${total} bytes, above the 2 GiB Tiller writes in one piece`, { format, field: 'size' })
  }
  const out = new Uint8Array(total)

  // Physical range per channel from the data, rounded outward to what the header can print;
  // the quantisation then uses exactly the printed values, as every reader will.
  const physical = rec.data.map((d, ch) => {
    let lo = Infinity
    let hi = -Infinity
    for (let i = 0; i < d.length; i++) {
      const v = d[i]
      if (!Number.isFinite(v)) {
        throw new RecordingFormatError(`channel ${rec.channels[ch]} sample ${i} is ${v}, not a finite number`, { format, field: rec.channels[ch] })
      }
      if (v < lo) lo = v
      if (v > hi) hi = v
    }
    if (!(hi > lo)) {
      lo = (Number.isFinite(lo) ? lo : 0) - 1
      hi = lo + 2
    }
    const minText = fitNumber(lo, 8, 'down', format, `physical minimum of ${rec.channels[ch]}`)
    const maxText = fitNumber(hi, 8, 'up', format, `physical maximum of ${rec.channels[ch]}`)
    return { minText, maxText, min: Number(minText), max: Number(maxText) }
  })

  // Fixed header.
  const when = rec.meta?.startDate && !Number.isNaN(rec.meta.startDate.getTime()) ? edfDate(rec.meta.startDate) : undefined
  const w = (f: readonly [number, number], text: string, name: string) => writeField(out, f[0], f[1], text, name, format)
  if (variant === 'bdf') {
    out[0] = 0xff
    writeField(out, 1, 7, 'BIOSEMI', 'version', format)
  } else {
    w(FIXED.version, '0', 'version')
  }
  w(FIXED.patient, `${subfield(rec.meta?.patientId)} X X X`.slice(0, 80), 'patient identification')
  w(FIXED.recording, `Startdate ${when?.plus ?? 'X'} ${subfield(rec.meta?.recordingId)} X Tiller`.slice(0, 80), 'recording identification')
  w(FIXED.startDate, when?.date ?? '01.01.85', 'start date')
  w(FIXED.startTime, when?.time ?? '00.00.00', 'start time')
  w(FIXED.headerBytes, String(headerBytes), 'number of header bytes')
  w(FIXED.reserved, variant === 'edf' ? 'EDF+C' : withAnnotationSignal ? 'BDF+C' : '24BIT', 'reserved')
  w(FIXED.recordCount, String(recordCount), 'number of data records')
  w(FIXED.recordDuration, layout.durationText, 'duration of a data record')
  w(FIXED.signalCount, String(signalCount), 'number of signals')

  // Signal headers, field by field (each field for all signals, then the next field).
  const annotationLabel = variant === 'bdf' ? 'BDF Annotations' : 'EDF Annotations'
  const values = (s: number): string[] => {
    if (s === ns) return [annotationLabel, '', '', '-1', '1', String(dMin), String(dMax), '', String(annotationSamples), '']
    const p = physical[s]
    return [rec.channels[s], '', 'uV', p.minText, p.maxText, String(dMin), String(dMax), '', String(spr), '']
  }
  let at = FIXED_HEADER_BYTES
  SIGNAL_FIELDS.forEach(([name, width], f) => {
    for (let s = 0; s < signalCount; s++) {
      writeField(out, at, width, values(s)[f], `${name} of signal ${s + 1}`, format)
      at += width
    }
  })

  // Data records.
  const range = dMax - dMin
  for (let r = 0; r < recordCount; r++) {
    let p = headerBytes + r * recordBytes
    for (let ch = 0; ch < ns; ch++) {
      const d = rec.data[ch]
      const { min, max } = physical[ch]
      const perUnit = range / (max - min)
      const last = d.length > 0 ? d[d.length - 1] : 0
      for (let i = 0; i < spr; i++) {
        const idx = r * spr + i
        const v = idx < d.length ? d[idx] : last // padding repeats the last sample
        let q = Math.round((v - min) * perUnit + dMin)
        if (q < dMin) q = dMin
        else if (q > dMax) q = dMax
        out[p] = q & 0xff
        out[p + 1] = (q >> 8) & 0xff
        if (bytesPerSample === 3) out[p + 2] = (q >> 16) & 0xff
        p += bytesPerSample
      }
    }
    if (withAnnotationSignal) out.set(encodedTals[r], p) // rest of the signal stays 0x00
  }
  return out
}
