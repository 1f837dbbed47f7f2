// CSV recordings: a header `time_s,<channel>,...[,cue]`, one row per sample, channel values
// in microvolts, and an optional last column `cue` holding the class name on a cue's onset
// row and nothing elsewhere (several cues on one row are joined with '|'). The sampling rate
// is read from the time column, which must be evenly spaced. Quoting follows RFC 4180.
// Annotations other than cues have no place in this format and are not written.

import { sampleCount, type Cue, type Recording } from '../recording'
import { RecordingFormatError } from './errors'
import type { CueRule } from './cue-rule'

const fail = (message: string, line?: number, field?: string): never => {
  throw new RecordingFormatError(message, { format: 'csv', line, field })
}

function show(s: string): string {
  const clean = s.replace(/[^\x20-\x7e]/g, '?')
  return clean.length > 24 ? `${clean.slice(0, 24)}...` : clean
}

/** Splits one CSV line (RFC 4180 quotes; a quoted field may not span lines here). */
function splitLine(line: string, lineNo: number): string[] {
  if (!line.includes('"')) return line.split(',')
  const cells: string[] = []
  let i = 0
  for (;;) {
    if (line[i] === '"') {
      let value = ''
      i++
      for (;;) {
        const q = line.indexOf('"', i)
        if (q < 0) fail(`line ${lineNo}: a quoted field is not closed`, lineNo)
        value += line.slice(i, q)
        if (line[q + 1] === '"') {
          value += '"'
          i = q + 2
        } else {
          i = q + 1
          break
        }
      }
      cells.push(value)
      if (i >= line.length) return cells
      if (line[i] !== ',') fail(`line ${lineNo}: text after a closing quote at column ${i + 1}`, lineNo)
      i++
    } else {
      const c = line.indexOf(',', i)
      if (c < 0) {
        cells.push(line.slice(i))
        return cells
      }
      cells.push(line.slice(i, c))
      i = c + 1
    }
  }
}

const NUMBER = /^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*$/

/** Above this a CSV no longer fits one JavaScript string; such recordings belong in EDF/BDF. */
export const MAX_CSV_BYTES = 400 * 1024 * 1024

export function readCsv(bytes: Uint8Array, options: CueRule = {}): Recording {
  if (bytes.length > MAX_CSV_BYTES) {
    fail(`the CSV file is ${bytes.length} bytes, above the ${MAX_CSV_BYTES}-byte limit for CSV; export long recordings as EDF or BDF`, undefined, 'size')
  }
  const text = new TextDecoder('utf-8').decode(bytes).replace(/^\uFEFF/, '')
  const lines: string[] = []
  let from = 0
  while (from <= text.length) {
    let nl = text.indexOf('\n', from)
    if (nl < 0) nl = text.length
    let line = text.slice(from, nl)
    if (line.endsWith('\r')) line = line.slice(0, -1)
    lines.push(line)
    from = nl + 1
  }
  while (lines.length > 0 && lines[lines.length - 1].trim() === '') lines.pop()
  if (lines.length === 0) fail('the file is empty', 1, 'header')
  const header = splitLine(lines[0], 1).map((h) => h.trim())
  if (header.length < 2) {
    fail(`line 1: expected a header 'time_s,<channel>,...[,cue]', found '${show(lines[0])}'` +
      (lines[0].includes(';') || lines[0].includes('\t') ? ' (columns must be separated by commas)' : ''), 1, 'header')
  }
  if (!/^time(_s)?$/i.test(header[0])) fail(`line 1: the first column must be 'time_s' (seconds), found '${show(header[0])}'`, 1, 'time_s')
  const hasCue = /^cue$/i.test(header[header.length - 1])
  const channels = header.slice(1, hasCue ? -1 : undefined)
  if (channels.length === 0) fail('line 1: no channel columns between time_s and cue', 1, 'header')
  const seen = new Set<string>()
  channels.forEach((c, i) => {
    if (c === '') fail(`line 1: channel column ${i + 2} has no name`, 1, 'header')
    if (/^(time(_s)?|cue)$/i.test(c)) fail(`line 1: '${show(c)}' may only be the first (time_s) or last (cue) column`, 1, c)
    if (seen.has(c)) fail(`line 1: channel '${show(c)}' appears twice`, 1, c)
    seen.add(c)
  })
  const rows = lines.length - 1
  if (rows < 2) fail(`the file has ${rows} data row${rows === 1 ? '' : 's'}; at least 2 are needed to know the sampling rate`, lines.length, 'time_s')
  const data = channels.map(() => new Float32Array(rows))
  const time = new Float64Array(rows)
  const cues: Cue[] = []
  for (let r = 0; r < rows; r++) {
    const lineNo = r + 2
    const cells = splitLine(lines[r + 1], lineNo)
    if (cells.length !== header.length) {
      fail(`line ${lineNo}: ${cells.length} columns, the header has ${header.length}`, lineNo)
    }
    const t = cells[0]
    if (!NUMBER.test(t)) fail(`line ${lineNo}, column time_s: '${show(t)}' is not a number`, lineNo, 'time_s')
    time[r] = Number(t)
    for (let c = 0; c < channels.length; c++) {
      const cell = cells[c + 1]
      if (!NUMBER.test(cell)) fail(`line ${lineNo}, column '${show(channels[c])}': '${show(cell)}' is not a number`, lineNo, channels[c])
      const v = Number(cell)
      if (!Number.isFinite(Math.fround(v))) fail(`line ${lineNo}, column '${show(channels[c])}': ${show(cell)} is out of range`, lineNo, channels[c])
      data[c][r] = v
    }
    if (hasCue) {
      const cell = cells[cells.length - 1].trim()
      if (cell !== '') {
        for (const label of cell.split('|').map((l) => l.trim()).filter((l) => l !== '')) {
          if (!options.cueLabels || options.cueLabels.includes(label)) cues.push({ sample: r, label })
        }
      }
    }
  }
  const rateHz = rateFromTimes(time)
  return { channels, rateHz, data, cues, annotations: [], meta: {} }
}

/** Sampling rate of an evenly spaced time column; refuses gaps, repeats and reversals. */
function rateFromTimes(time: Float64Array): number {
  const n = time.length
  const dt = (time[n - 1] - time[0]) / (n - 1)
  if (!(dt > 0) || !Number.isFinite(dt)) fail(`column time_s does not increase (first ${time[0]} s, last ${time[n - 1]} s)`, 2, 'time_s')
  for (let i = 1; i < n; i++) {
    if (!(time[i] > time[i - 1])) fail(`line ${i + 2}, column time_s: ${time[i]} s does not follow ${time[i - 1]} s`, i + 2, 'time_s')
    // Each time within a quarter sample of the even grid: catches gaps and dropped rows even
    // when times were printed with few decimals.
    if (Math.abs(time[i] - (time[0] + i * dt)) > 0.25 * dt) {
      fail(`line ${i + 2}, column time_s: ${time[i]} s is off the even spacing of ${dt} s (a gap or a missing row?)`, i + 2, 'time_s')
    }
  }
  const rate = 1 / dt
  const whole = Math.round(rate)
  return Math.abs(rate - whole) <= 1e-4 * rate ? whole : rate
}

const POWERS_OF_TEN = [1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9]

/**
 * Shortest decimal text that reads back as the same float32 value. Rounding to d decimals
 * with plain arithmetic finds it for microvolt-sized values about twice as fast as
 * toPrecision; very small or large values take the toPrecision path.
 */
function float32Text(v: number): string {
  for (let d = 0; d < POWERS_OF_TEN.length; d++) {
    const r = Math.round(v * POWERS_OF_TEN[d]) / POWERS_OF_TEN[d]
    if (Math.fround(r) === v) return String(r)
  }
  for (let p = 6; p <= 9; p++) {
    const s = v.toPrecision(p)
    if (Math.fround(Number(s)) === v) return String(Number(s))
  }
  return String(v)
}

function quote(cell: string): string {
  return /[",\r\n]/.test(cell) ? `"${cell.replace(/"/g, '""')}"` : cell
}

export function writeCsv(rec: Recording): Uint8Array {
  const err = (m: string, field: string) => { throw new RecordingFormatError(m, { format: 'csv', field }) }
  if (rec.channels.length === 0) err('the recording has no channels', 'channels')
  if (rec.channels.length !== rec.data.length) err(`${rec.channels.length} channel names but ${rec.data.length} data arrays`, 'channels')
  if (!(rec.rateHz > 0) || !Number.isFinite(rec.rateHz)) err(`sampling rate ${rec.rateHz} Hz is not a positive number`, 'rateHz')
  const n = sampleCount(rec)
  rec.data.forEach((d, i) => { if (d.length !== n) err(`channel ${rec.channels[i]} has ${d.length} samples, not ${n}`, rec.channels[i]) })
  const seen = new Set<string>()
  for (const c of rec.channels) {
    if (c.trim() === '' || /^(time(_s)?|cue)$/i.test(c.trim())) err(`channel name '${c}' cannot be a CSV column name`, c)
    if (seen.has(c)) err(`channel name '${c}' appears twice`, c)
    seen.add(c)
  }
  const cueAt = new Map<number, string[]>()
  for (const c of rec.cues) {
    if (!Number.isInteger(c.sample) || c.sample < 0 || c.sample >= n) err(`cue '${c.label}' at sample ${c.sample} is outside the ${n} samples`, 'cues')
    if (/[|\r\n]/.test(c.label) || c.label.trim() === '') err(`cue label '${c.label}' is empty or contains '|' or a line break`, 'cues')
    const list = cueAt.get(c.sample) ?? []
    list.push(c.label)
    cueAt.set(c.sample, list)
  }
  const hasCue = rec.cues.length > 0
  const encoder = new TextEncoder()
  const parts: Uint8Array[] = []
  let buffer = ['time_s', ...rec.channels, ...(hasCue ? ['cue'] : [])].map(quote).join(',') + '\n'
  const ns = rec.channels.length
  rec.data.forEach((d, c) => {
    for (let i = 0; i < d.length; i++) {
      if (!Number.isFinite(d[i])) err(`channel ${rec.channels[c]} sample ${i} is ${d[i]}, not a finite number`, rec.channels[c])
    }
  })
  const cells: string[] = new Array(ns + 1 + (hasCue ? 1 : 0))
  const rows: string[] = []
  for (let i = 0; i < n; i++) {
    cells[0] = String(i / rec.rateHz)
    for (let c = 0; c < ns; c++) cells[c + 1] = float32Text(rec.data[c][i])
    if (hasCue) cells[ns + 1] = quote((cueAt.get(i) ?? []).join('|'))
    rows.push(cells.join(','))
    // Encode in pieces so a long recording never becomes one giant string.
    if (rows.length === 2048) {
      buffer += rows.join('\n') + '\n'
      rows.length = 0
      parts.push(encoder.encode(buffer))
      buffer = ''
    }
  }
  if (rows.length > 0) buffer += rows.join('\n') + '\n'
  parts.push(encoder.encode(buffer))
  const total = parts.reduce((s, p) => s + p.length, 0)
  const out = new Uint8Array(total)
  let at = 0
  for (const p of parts) {
    out.set(p, at)
    at += p.length
  }
  return out
}
