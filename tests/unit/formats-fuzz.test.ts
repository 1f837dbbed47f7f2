// Fuzzing the recording readers (fast-check): mutated, truncated and invented EDF/BDF/CSV
// inputs must either read as a well-formed Recording or be refused with RecordingFormatError
// - never another exception, never a hang. Each parse is timed and bounded.
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import {
  RecordingFormatError, createEdfParser, readBdf, readCsv, readEdf, readRecording, writeRecording,
} from '../../app/engine/formats/index'
import { FIXED, SIGNAL_FIELDS } from '../../app/engine/formats/edf-header'
import type { Recording } from '../../app/engine/recording'
import { sensorimotorRecording } from '../fixtures/formats/sample-recordings'

const dir = join(__dirname, '../fixtures/formats')
const file = (name: string) => new Uint8Array(readFileSync(join(dir, name)))
const SEEDS = {
  edf: [file('tiller-sensorimotor.edf'), file('spec-edfplus.edf'), file('tiller-padded.edf')],
  bdf: [file('tiller-sensorimotor.bdf'), file('spec-biosemi.bdf')],
  csv: [writeRecording(sensorimotorRecording(), 'csv').subarray(0, 6000)],
}
// Keep CSV seeds whole lines so the unmutated seed is valid.
SEEDS.csv[0] = SEEDS.csv[0].subarray(0, SEEDS.csv[0].lastIndexOf(10) + 1)

/** Per-parse time bound: parsing these files takes about a millisecond; the margin absorbs a loaded CI machine, a hang would still fail. */
const MAX_PARSE_MS = 2000
let slowest = 0
let parsed = 0
let refused = 0

function wellFormed(r: Recording): void {
  expect(r.channels.length).toBe(r.data.length)
  expect(r.channels.length).toBeGreaterThan(0)
  expect(Number.isFinite(r.rateHz) && r.rateHz > 0).toBe(true)
  const n = r.data[0].length
  for (const d of r.data) {
    expect(d.length).toBe(n)
    for (let i = 0; i < d.length; i++) if (!Number.isFinite(d[i])) expect.unreachable(`sample ${i} is ${d[i]}`)
  }
  for (const c of r.cues) expect(Number.isInteger(c.sample) && c.sample >= 0 && c.sample < n).toBe(true)
  for (const a of r.annotations) expect(Number.isFinite(a.onsetSeconds)).toBe(true)
}

/** Runs a reader; passes on a Recording or a RecordingFormatError with a message, fails otherwise. */
function check(read: () => Recording): 'read' | 'refused' {
  const t0 = performance.now()
  let outcome: 'read' | 'refused'
  try {
    wellFormed(read())
    outcome = 'read'
    parsed++
  } catch (e) {
    if (!(e instanceof RecordingFormatError)) throw e // the property fails with the real error
    expect(e.message.length).toBeGreaterThan(10)
    outcome = 'refused'
    refused++
  }
  const ms = performance.now() - t0
  slowest = Math.max(slowest, ms)
  expect(ms).toBeLessThan(MAX_PARSE_MS)
  return outcome
}

type Mutation =
  | { kind: 'flip'; at: number; value: number }
  | { kind: 'delete'; at: number; length: number }
  | { kind: 'insert'; at: number; bytes: number[] }
  | { kind: 'truncate'; at: number }

const mutation = fc.oneof(
  { weight: 5, arbitrary: fc.record({ kind: fc.constant('flip' as const), at: fc.nat(), value: fc.integer({ min: 0, max: 255 }) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('delete' as const), at: fc.nat(), length: fc.integer({ min: 1, max: 300 }) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('insert' as const), at: fc.nat(), bytes: fc.array(fc.integer({ min: 0, max: 255 }), { minLength: 1, maxLength: 40 }) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('truncate' as const), at: fc.nat() }) },
)

function concat(...parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0))
  let at = 0
  for (const p of parts) {
    out.set(p, at)
    at += p.length
  }
  return out
}

/** Mutations land in the header half the time: that is where the interesting checks are. */
function apply(seed: Uint8Array, mutations: Mutation[], headerBias: boolean): Uint8Array {
  let b: Uint8Array = Uint8Array.from(seed)
  for (const m of mutations) {
    const span = headerBias ? Math.min(b.length, 256 * 6) : b.length
    const at = span === 0 ? 0 : m.at % span
    if (m.kind === 'flip' && b.length > 0) b[at] = m.value
    else if (m.kind === 'delete') b = concat(b.subarray(0, at), b.subarray(at + m.length))
    else if (m.kind === 'insert') b = concat(b.subarray(0, at), Uint8Array.from(m.bytes), b.subarray(at))
    else if (m.kind === 'truncate') b = b.subarray(0, b.length === 0 ? 0 : m.at % b.length)
  }
  return b
}

/** Overwrites one header field of one signal with arbitrary printable text, the nastiest case. */
const fieldEdit = fc.record({
  field: fc.integer({ min: 0, max: 9 + SIGNAL_FIELDS.length - 1 }),
  signal: fc.nat(),
  text: fc.oneof(
    fc.string({ maxLength: 16 }),
    fc.constantFrom('-1', '0', '1e9', '99999999', '-99999999', '0.0000001', 'NaN', ' 12 ', '+5', '1.5', '-32769', '8388608', ''),
    fc.integer().map(String),
    fc.double({ noNaN: false }).map((d) => String(d).slice(0, 8)),
  ),
})

function editField(seed: Uint8Array, edit: { field: number; signal: number; text: string }): Uint8Array {
  const b = Uint8Array.from(seed)
  const fixed = Object.values(FIXED)
  let offset: number
  let width: number
  if (edit.field < fixed.length) {
    ;[offset, width] = fixed[edit.field]
  } else {
    const ns = Number(String.fromCharCode(...b.subarray(252, 256)).trim()) || 1
    const f = edit.field - fixed.length
    let at = 256
    for (let i = 0; i < f; i++) at += SIGNAL_FIELDS[i][1] * ns
    width = SIGNAL_FIELDS[f][1]
    offset = at + (edit.signal % ns) * width
  }
  const text = edit.text.padEnd(width, ' ').slice(0, width)
  for (let i = 0; i < width && offset + i < b.length; i++) b[offset + i] = text.charCodeAt(i) & 0xff
  return b
}

describe('fuzzing the EDF/BDF readers', () => {
  it('mutated EDF and BDF files: a Recording or a RecordingFormatError (3000 cases)', () => {
    const seeds = [...SEEDS.edf, ...SEEDS.bdf]
    fc.assert(
      fc.property(fc.nat(seeds.length - 1), fc.array(mutation, { minLength: 1, maxLength: 6 }), fc.boolean(), (s, ms, bias) => {
        const bytes = apply(seeds[s], ms, bias)
        check(() => readRecording(bytes, s < SEEDS.edf.length ? 'm.edf' : 'm.bdf'))
        // The specific readers must hold to the same contract (no safety net around them).
        check(() => (bytes[0] === 0xff ? readBdf(bytes) : readEdf(bytes)))
      }),
      { numRuns: 3000, seed: 1 },
    )
  })

  it('every header field overwritten with odd text (2000 cases)', () => {
    const seeds = [...SEEDS.edf, ...SEEDS.bdf]
    fc.assert(
      fc.property(fc.nat(seeds.length - 1), fc.array(fieldEdit, { minLength: 1, maxLength: 3 }), (s, edits) => {
        let bytes: Uint8Array = seeds[s]
        for (const e of edits) bytes = editField(bytes, e)
        check(() => readRecording(bytes, 'f.edf'))
      }),
      { numRuns: 2000, seed: 2 },
    )
  })

  it('every truncation length of a file is refused with the record count in the message', () => {
    const seed = SEEDS.edf[0]
    let messages = 0
    for (let len = 0; len < seed.length; len += 7) {
      const outcome = check(() => readEdf(seed.subarray(0, len)))
      expect(outcome).toBe('refused')
      try {
        readEdf(seed.subarray(0, len))
      } catch (e) {
        if (len > 1280 && /truncated: the header declares \d+ data records/.test((e as Error).message)) messages++
      }
    }
    expect(messages).toBeGreaterThan(2000)
  })

  it('the streaming parser, fed in random chunks, agrees with the whole-file reader (1500 cases)', () => {
    const seeds = [...SEEDS.edf, ...SEEDS.bdf]
    fc.assert(
      fc.property(
        fc.nat(seeds.length - 1), fc.array(mutation, { maxLength: 3 }), fc.array(fc.integer({ min: 1, max: 5000 }), { minLength: 1, maxLength: 20 }),
        (s, ms, sizes) => {
          const bytes = apply(seeds[s], ms, true)
          let whole: Recording | RecordingFormatError
          try {
            whole = readRecording(bytes, 'w.edf')
          } catch (e) {
            whole = e as RecordingFormatError
          }
          let streamed: Recording | RecordingFormatError
          const t0 = performance.now()
          try {
            const parser = createEdfParser()
            let at = 0
            let k = 0
            while (at < bytes.length) {
              const size = sizes[k++ % sizes.length]
              parser.push(bytes.subarray(at, at + size))
              at += size
            }
            streamed = parser.end()
          } catch (e) {
            if (!(e instanceof RecordingFormatError)) throw e
            streamed = e
          }
          expect(performance.now() - t0).toBeLessThan(MAX_PARSE_MS)
          if (whole instanceof RecordingFormatError) {
            expect(streamed).toBeInstanceOf(RecordingFormatError)
          } else {
            expect(streamed).not.toBeInstanceOf(RecordingFormatError)
            const r = streamed as Recording
            expect(r.channels).toEqual(whole.channels)
            expect(r.rateHz).toBe(whole.rateHz)
            expect(r.cues).toEqual(whole.cues)
            r.data.forEach((d, c) => expect(Buffer.from(d.buffer, d.byteOffset, d.byteLength).equals(
              Buffer.from(whole.data[c].buffer, whole.data[c].byteOffset, whole.data[c].byteLength))).toBe(true))
          }
        },
      ),
      { numRuns: 1500, seed: 3 },
    )
  })

  it('random bytes behind a valid magic number (1000 cases)', () => {
    fc.assert(
      fc.property(fc.boolean(), fc.uint8Array({ maxLength: 3000 }), (bdf, tail) => {
        const magic = bdf ? [0xff, ...'BIOSEMI'.split('').map((c) => c.charCodeAt(0))] : [...'0       '].map((c) => c.charCodeAt(0))
        check(() => readRecording(Uint8Array.from([...magic, ...tail]), 'r.edf'))
      }),
      { numRuns: 1000, seed: 4 },
    )
  })
})

describe('fuzzing the CSV reader', () => {
  it('mutated CSV files (2000 cases)', () => {
    fc.assert(
      fc.property(fc.array(mutation, { minLength: 1, maxLength: 6 }), fc.boolean(), (ms, bias) => {
        const bytes = apply(SEEDS.csv[0], ms, bias)
        check(() => readCsv(bytes))
        check(() => readRecording(bytes, 'm.csv'))
      }),
      { numRuns: 2000, seed: 5 },
    )
  })

  it('generated CSV text from a grammar of cells (1000 cases)', () => {
    const cell = fc.oneof(
      fc.double({ noNaN: false }).map(String), fc.constantFrom('', '"', '""', '"a,b"', 'left', ' 1 ', '1e400', '-', '.', '0x10', 'Infinity'),
      fc.string({ maxLength: 6 }),
    )
    const line = fc.array(cell, { minLength: 1, maxLength: 6 }).map((c) => c.join(','))
    fc.assert(
      fc.property(fc.constantFrom('time_s,C3,C4,cue', 'time_s,C3', 'time,C3,C3', 'time_s;C3', 'time_s,,cue'), fc.array(line, { maxLength: 30 }), fc.constantFrom('\n', '\r\n'), (head, lines, eol) => {
        const text = [head, ...lines].join(eol)
        check(() => readCsv(new TextEncoder().encode(text)))
      }),
      { numRuns: 1000, seed: 6 },
    )
  })

  it('the harness itself fails on any error other than RecordingFormatError', () => {
    expect(() => check(() => { throw new TypeError('a defect') })).toThrow(TypeError)
    expect(check(() => { throw new RecordingFormatError('a clear refusal of the input', { format: 'csv' }) })).toBe('refused')
  })

  it('reports the figures', () => {
    // Printed for the closing note; the bound itself is asserted per parse above.
    console.log(`fuzz: ${parsed + refused} parses, ${parsed} read, ${refused} refused, slowest ${slowest.toFixed(1)} ms`)
    expect(parsed + refused).toBeGreaterThan(10000)
  })
})
