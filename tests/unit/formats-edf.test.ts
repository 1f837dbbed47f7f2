// EDF/EDF+/BDF: round trips, header validation messages, the incremental parser, layout.
// Expected values follow the EDF specification (Kemp et al. 1992) and EDF+ (Kemp & Olivan
// 2003): header field offsets, physical/digital scaling, TAL grammar.
import { describe, expect, it } from 'vitest'
import {
  RecordingFormatError, createEdfParser, readBdf, readEdf, readRecording, writeRecording,
} from '../../app/engine/formats/index'
import { readEdfWithDetails } from '../../app/engine/formats/edf'
import { parseHeader } from '../../app/engine/formats/edf-header'
import { chooseRecordLayout } from '../../app/engine/formats/edf-writer'
import { encodeRecordTals, parseRecordTals } from '../../app/engine/formats/tal'
import type { Recording } from '../../app/engine/recording'
import { sensorimotorRecording } from '../fixtures/formats/sample-recordings'

const ascii = (s: string) => new TextEncoder().encode(s)
const text = (b: Uint8Array, from: number, len: number) => new TextDecoder('latin1').decode(b.subarray(from, from + len))

function errorOf(f: () => unknown): RecordingFormatError {
  try {
    f()
  } catch (e) {
    expect(e).toBeInstanceOf(RecordingFormatError)
    return e as RecordingFormatError
  }
  throw new Error('expected a RecordingFormatError')
}

function overwrite(b: Uint8Array, offset: number, width: number, value: string): Uint8Array {
  const out = Uint8Array.from(b)
  out.set(ascii(value.padEnd(width, ' ')), offset)
  return out
}

const rec = sensorimotorRecording()
const edf = writeRecording(rec, 'edf')
const bdf = writeRecording(rec, 'bdf')

describe('EDF+ writing follows the specification', () => {
  it('fixed header fields', () => {
    expect(text(edf, 0, 8)).toBe('0       ')
    expect(text(edf, 168, 8)).toBe('17.05.24') // dd.mm.yy
    expect(text(edf, 176, 8)).toBe('09.30.05')
    expect(Number(text(edf, 184, 8))).toBe(256 * (4 + 1 + 1)) // 4 channels + annotations
    expect(text(edf, 192, 5)).toBe('EDF+C')
    expect(text(edf, 8, 80).trim()).toBe('P-007 X X X') // EDF+ patient subfields
    expect(text(edf, 88, 80).trim()).toBe('Startdate 17-MAY-2024 S2 X Tiller')
    expect(Number(text(edf, 252, 4))).toBe(5)
    const h = parseHeader(edf)
    expect(h.signals.map((s) => s.label)).toEqual(['C3', 'Cz', 'C4', 'FCz', 'EDF Annotations'])
    expect(h.signals[0].physicalDimension).toBe('uV')
    expect([h.signals[0].digitalMin, h.signals[0].digitalMax]).toEqual([-32768, 32767])
    expect(h.recordDurationSeconds * h.recordCount).toBe(8)
    expect(h.recordBytes * h.recordCount + h.headerBytes).toBe(edf.length)
  })

  it('BDF: 0xFF BIOSEMI, 24-bit range, BDF+ annotations signal', () => {
    expect(bdf[0]).toBe(0xff)
    expect(text(bdf, 1, 7)).toBe('BIOSEMI')
    expect(text(bdf, 192, 5)).toBe('BDF+C')
    const h = parseHeader(bdf)
    expect([h.signals[0].digitalMin, h.signals[0].digitalMax]).toEqual([-8388608, 8388607])
    expect(h.signals.at(-1)?.label).toBe('BDF Annotations')
    const plain = writeRecording({ ...rec, cues: [], annotations: [] }, 'bdf')
    expect(text(plain, 192, 5)).toBe('24BIT')
    expect(parseHeader(plain).signals.length).toBe(4)
  })

  it('keeps data records under the recommended 61440 bytes and avoids padding when it can', () => {
    expect(chooseRecordLayout(250, 2000, 4, 2, 'edf')).toEqual({ samplesPerRecord: 250, durationText: '1', recordCount: 8 })
    // 64 channels x 500 Hz x 2 bytes = 64000 > 61440: half-second records.
    expect(chooseRecordLayout(500, 5000, 64, 2, 'edf').durationText).toBe('0.5')
    // 2600 samples at 512 Hz: no preferred duration divides it, 0.25 s... (128) does not either -> divisor search.
    const odd = chooseRecordLayout(512, 2600, 3, 2, 'edf')
    expect(2600 % odd.samplesPerRecord === 0 || odd.recordCount * odd.samplesPerRecord >= 2600).toBe(true)
  })
})

describe('round trips', () => {
  const maxError = (a: Recording, b: Recording) => {
    let worst = 0
    a.data.forEach((d, c) => d.forEach((v, i) => { worst = Math.max(worst, Math.abs(v - b.data[c][i])) }))
    return worst
  }
  it.each([['edf', 2 ** 16], ['bdf', 2 ** 24]] as const)('%s: samples to half a quantisation step, cues and annotations exact', (format, levels) => {
    const back = readRecording(writeRecording(rec, format), `r.${format}`)
    expect(back.channels).toEqual(rec.channels)
    expect(back.rateHz).toBe(rec.rateHz)
    let range = 0
    for (const d of rec.data) range = Math.max(range, Math.max(...d) - Math.min(...d))
    // Physical limits round outward by at most one 8-character digit; float32 adds a little.
    expect(maxError(back, rec)).toBeLessThanOrEqual((range * 1.01) / (levels - 1) / 2 + 1e-5)
    expect(back.cues).toEqual(rec.cues)
    expect(back.annotations).toEqual(rec.annotations)
    expect(back.meta).toEqual(rec.meta)
  })

  it('a cue and an annotation in the last, padded data record', () => {
    const r: Recording = {
      channels: ['C3'], rateHz: 512, data: [Float32Array.from({ length: 1300 }, (_, i) => Math.sin(i))],
      cues: [{ sample: 1299, label: 'feet' }], annotations: [{ onsetSeconds: 2.5, durationSeconds: 0.1, text: 'end' }],
    }
    const back = readEdf(writeRecording(r, 'edf'))
    expect(back.cues).toEqual(r.cues)
    expect(back.annotations).toEqual(r.annotations)
    expect(back.data[0].length).toBe(1536) // padded to whole 1 s records, documented
    expect(back.data[0][1535]).toBeCloseTo(r.data[0][1299], 3) // padding repeats the last sample
  })

  it('flat and tiny channels keep a valid physical range', () => {
    const r: Recording = {
      channels: ['flat', 'tiny', 'big'], rateHz: 100,
      data: [new Float32Array(100), Float32Array.from({ length: 100 }, (_, i) => i * 1e-7), Float32Array.from({ length: 100 }, (_, i) => (i - 50) * 2e4)],
      cues: [], annotations: [],
    }
    const back = readEdf(writeRecording(r, 'edf'))
    expect(Array.from(back.data[0]).every((v) => Math.abs(v) < 1e-4)).toBe(true)
    back.data[2].forEach((v, i) => expect(Math.abs(v - r.data[2][i])).toBeLessThan(2e6 / 65535))
  })

  it('cueLabels picks cues in files from elsewhere', () => {
    const r: Recording = { ...rec, cues: [], annotations: [{ onsetSeconds: 1, durationSeconds: 4, text: 'T1' }, { onsetSeconds: 5, durationSeconds: 4, text: 'T2' }] }
    const bytes = writeRecording(r, 'edf')
    expect(readEdf(bytes).cues).toEqual([]) // with durations they are annotations by default
    const read = readEdf(bytes, { cueLabels: ['T1', 'T2'] })
    expect(read.cues).toEqual([{ sample: 250, label: 'T1' }, { sample: 1250, label: 'T2' }])
    expect(read.annotations).toEqual([])
  })
})

describe('writer refuses what EDF cannot hold, saying why', () => {
  const base: Recording = { channels: ['C3'], rateHz: 250, data: [new Float32Array(250)], cues: [], annotations: [] }
  it.each([
    [{ channels: ['ThisNameIsTooLong17'] }, /longer than the 16 characters/],
    [{ channels: ['Cé'] }, /outside printable ASCII/],
    [{ rateHz: 0 }, /not a positive number/],
    [{ data: [Float32Array.of(0, NaN)] }, /sample 1 is NaN/],
    [{ channels: ['C3', 'C3'], data: [new Float32Array(2), new Float32Array(2)] }, /appears twice/],
    [{ channels: ['C3', 'C4'], data: [new Float32Array(2), new Float32Array(3)] }, /has 3 samples/],
    [{ rateHz: Math.PI }, /no whole number of samples/],
    [{ data: [Float32Array.of(0, -2e7)] }, /physical minimum of C3 -20000000 does not fit in 8 characters/],
  ] as [Partial<Recording>, RegExp][])('%o', (patch, message) => {
    expect(errorOf(() => writeRecording({ ...base, ...patch }, 'edf')).message).toMatch(message)
  })
})

describe('reader validates the header, naming field and byte offset', () => {
  it.each([
    [0, 8, 'X       ', /version field \(header bytes 0-7\)/],
    [184, 8, '999', /number of header bytes \(header byte 184\) is 999, but 5 signals need 256 x 6 = 1536/],
    [236, 8, 'abc', /number of data records \(header byte 236\) is 'abc', not a number/],
    [236, 8, '-5', /number of data records \(header byte 236\) is -5, expected at least -1/],
    [244, 8, '0', /duration of a data record \(header byte 244\) is 0/],
    [252, 4, '0', /number of signals \(header byte 252\) is 0, expected at least 1/],
    [256 + 16 * 5 + 80 * 5 + 8 * 5 + 8 * 5 + 8 * 5, 8, '40000', /digital minimum of signal 1 \(header byte 856\) is 40000, expected at most 32767/],
    [256 + 16 * 5 + 80 * 5 + 8 * 5 + 8 * 5 + 8 * 5 + 8 * 5, 8, '-32768', /signal 1 \('C3'\): digital maximum -32768 is not above digital minimum/],
    [256 + 16 * 5 + 80 * 5 + 8 * 5 + 8 * 5 + 8 * 5 + 8 * 5 + 8 * 5 + 80 * 5, 8, '1.5', /samples per data record of signal 1 \(header byte 1336\) is 1.5, expected a whole number/],
  ] as [number, number, string, RegExp][])('offset %i = %s', (offset, width, value, message) => {
    const e = errorOf(() => readEdf(overwrite(edf, offset, width, value)))
    expect(e.message).toMatch(message)
  })

  it('truncation: names the record count and the partial record', () => {
    const h = parseHeader(edf)
    const cut = edf.subarray(0, h.headerBytes + 3 * h.recordBytes + 100)
    const e = errorOf(() => readEdf(cut))
    expect(e.message).toBe(`truncated: the header declares 8 data records of ${h.recordBytes} bytes, the file holds 3 and 100 bytes of the next`)
    expect(e.offset).toBe(h.headerBytes + 3 * h.recordBytes)
    const p = createEdfParser()
    p.push(cut)
    expect(errorOf(() => p.end()).message).toBe(`truncated: data record 3 has 100 of its ${h.recordBytes} bytes (the header declares 8 data records, 3 are complete)`)
    expect(errorOf(() => readEdf(edf.subarray(0, 700))).message).toMatch(/file ends inside the header: 700 of 1536 header bytes/)
    expect(errorOf(() => readEdf(new Uint8Array(0))).message).toMatch(/empty|version/)
  })

  it('extra bytes after the declared records', () => {
    const longer = new Uint8Array(edf.length + 10)
    longer.set(edf)
    expect(errorOf(() => readEdf(longer)).message).toMatch(/continues past the 8 data records its header declares \(extra bytes from byte \d+\)/)
  })

  it('a broken TAL names the data record and byte', () => {
    const h = parseHeader(edf)
    const annotationsAt = h.headerBytes + h.signals[4].offsetInRecord
    const b = Uint8Array.from(edf)
    b[annotationsAt] = 0x41 // 'A' instead of '+'
    const e = errorOf(() => readEdf(b))
    expect(e.message).toMatch(new RegExp(`annotation in data record 0 \\(byte ${annotationsAt}\\): onset 'A0' is not a signed number`))
  })

  it('a gap between data records (EDF+D) is refused, not glued shut', () => {
    const h = parseHeader(edf)
    const b = Uint8Array.from(edf)
    const at = h.headerBytes + 2 * h.recordBytes + h.signals[4].offsetInRecord
    b.set(ascii('+9'), at) // record 2 claims to start at 9 s instead of 2 s
    expect(errorOf(() => readEdf(b)).message).toMatch(/data record 2 starts at 9 s, not 2 s: the recording is discontinuous/)
  })

  it('EDF read as BDF and back says which it is', () => {
    expect(errorOf(() => readBdf(edf)).message).toMatch(/this is an EDF file/)
    expect(errorOf(() => readEdf(bdf)).message).toMatch(/this is a BDF file/)
    expect(readRecording(bdf, 'misnamed.edf').channels).toEqual(rec.channels) // magic wins
    expect(errorOf(() => readRecording(ascii('hello'), 'notes.doc')).message).toMatch(/not a recognised recording/)
  })
})

describe('incremental parser', () => {
  it('gives the same recording for any chunk size, including 1 byte', () => {
    const whole = readEdf(edf)
    for (const size of [1, 3, 255, 256, 257, 1000, 4096, edf.length]) {
      const p = createEdfParser()
      for (let i = 0; i < edf.length; i += size) p.push(edf.subarray(i, i + size))
      const r = p.end()
      expect(r.cues).toEqual(whole.cues)
      r.data.forEach((d, c) => expect(Array.from(d)).toEqual(Array.from(whole.data[c])))
    }
  })
  it('exposes the header as soon as it has arrived and fails early on a bad one', () => {
    const p = createEdfParser()
    p.push(edf.subarray(0, 1000))
    expect(p.header).toBeUndefined()
    p.push(edf.subarray(1000, 1536))
    expect(p.header?.signals.length).toBe(5)
    const q = createEdfParser()
    expect(() => q.push(overwrite(edf, 252, 4, 'x').subarray(0, 256))).toThrow(RecordingFormatError)
  })
  it('reads files whose header gives -1 data records (allowed while recording)', () => {
    const b = overwrite(edf, 236, 8, '-1')
    const p = createEdfParser()
    for (let i = 0; i < b.length; i += 5000) p.push(b.subarray(i, i + 5000))
    expect(p.end().data[0].length).toBe(2000)
  })
  it('gives whole-number rates for records of decimal length (254 samples in 1.016 s = 250 Hz)', () => {
    const r: Recording = { channels: ['C3'], rateHz: 250, data: [Float32Array.from({ length: 254 * 7 }, (_, i) => i % 13)], cues: [], annotations: [] }
    const b = writeRecording(r, 'edf')
    expect(parseHeader(b).recordDurationSeconds).toBe(1.016)
    expect(readEdf(b).rateHz).toBe(250)
  })
  it('leaves out signals at another rate and says so', () => {
    expect(readEdfWithDetails(edf).skippedSignals).toEqual([])
  })
  it('sets a BioSemi Status channel aside (trigger bits, not microvolts)', async () => {
    const { readBdfWithDetails } = await import('../../app/engine/formats/bdf')
    const r: Recording = { channels: ['Fp1', 'Status'], rateHz: 10, data: [Float32Array.of(1, 2, 3, 4, 5, 6, 7, 8, 9, 10), new Float32Array(10)], cues: [], annotations: [] }
    const { recording, skippedSignals } = readBdfWithDetails(writeRecording(r, 'bdf'))
    expect(recording.channels).toEqual(['Fp1'])
    expect(skippedSignals).toEqual([{ label: 'Status', reason: 'BioSemi trigger channel (trigger bits are not decoded)' }])
  })
})

describe('TAL codec (EDF+ section 2.2)', () => {
  it('encodes the time-keeping TAL first, durations only where given', () => {
    const bytes = encodeRecordTals(3, [{ onsetSeconds: 3.25, durationSeconds: undefined, text: 'left' }, { onsetSeconds: 3.5, durationSeconds: 0.2, text: 'blink' }])
    expect(new TextDecoder().decode(bytes)).toBe('+3\x14\x14\x00+3.25\x14left\x14\x00+3.5\x150.2\x14blink\x14\x00')
    const back = parseRecordTals(bytes, 0, 0, 'edf')
    expect(back.recordStartSeconds).toBe(3)
    expect(back.annotations).toEqual([{ onsetSeconds: 3.25, durationSeconds: undefined, text: 'left' }, { onsetSeconds: 3.5, durationSeconds: 0.2, text: 'blink' }])
  })
  it('reads several texts in one TAL and negative onsets', () => {
    const bytes = ascii('-0.5\x14\x14\x00+1\x14a\x14b\x14\x00\x00\x00')
    const r = parseRecordTals(bytes, 0, 0, 'edf')
    expect(r.recordStartSeconds).toBe(-0.5)
    expect(r.annotations.map((a) => a.text)).toEqual(['a', 'b'])
  })
})

describe('EDF/BDF round trip property (fast-check)', () => {
  it('random recordings: every sample within half a quantisation step, cues exact (200 cases)', async () => {
    const fc = (await import('fast-check')).default
    fc.assert(
      fc.property(
        fc.constantFrom('edf' as const, 'bdf' as const), fc.integer({ min: 1, max: 5 }), fc.integer({ min: 1, max: 700 }),
        fc.constantFrom(100, 128, 160, 250, 256, 500, 512, 1000), fc.double({ min: 0.01, max: 5000, noNaN: true }), fc.integer({ min: 1, max: 1 << 30 }),
        (format, ch, n, rateHz, amplitudeUv, seed) => {
          let s = seed
          const rand = () => ((s = (s * 48271) % 2147483647) / 2147483647) - 0.5
          const data = Array.from({ length: ch }, () => Float32Array.from({ length: n }, () => amplitudeUv * rand()))
          const cues = [{ sample: Math.floor(n / 2), label: 'left' }]
          const rec: Recording = { channels: data.map((_, c) => `E${c}`), rateHz, data, cues, annotations: [] }
          const bytes = writeRecording(rec, format)
          const header = parseHeader(bytes)
          const back = readRecording(bytes, `p.${format}`)
          expect(back.rateHz).toBe(rateHz)
          expect(back.cues).toEqual(cues)
          back.data.forEach((d, c) => {
            const sig = header.signals[c]
            const halfStep = (sig.physicalMax - sig.physicalMin) / (sig.digitalMax - sig.digitalMin) / 2
            for (let i = 0; i < n; i++) expect(Math.abs(d[i] - data[c][i])).toBeLessThanOrEqual(halfStep * 1.0001 + 4e-7 * Math.abs(data[c][i]))
            for (let i = n; i < d.length; i++) expect(Math.abs(d[i] - data[c][n - 1])).toBeLessThanOrEqual(halfStep * 1.0001 + 4e-7 * amplitudeUv)
          })
        },
      ),
      { numRuns: 200, seed: 8 },
    )
  })
})

describe('scaling extremes stay finite', () => {
  it('refuses physical limits that would overflow float32, reads the largest allowed as finite', () => {
    const rec1: Recording = { channels: ['C3'], rateHz: 10, data: [Float32Array.of(1, 2, 3, 4, 5, 6, 7, 8, 9, 10)], cues: [], annotations: [] }
    const b = writeRecording(rec1, 'bdf')
    const pminAt = 256 + 16 + 80 + 8 // one signal (no annotations): after label, transducer, dimension
    expect(errorOf(() => readBdf(overwrite(b, pminAt, 8, '-1e21'))).message).toMatch(/physical minimum of signal 1 \(header byte 360\) is -1e21, expected at least -100000000000000000000$/)
    const big = overwrite(overwrite(overwrite(b, pminAt, 8, '-1e20'), pminAt + 8, 8, '1e20'), 256 + 16 + 80, 8, 'V')
    const r = readBdf(big)
    expect(Array.from(r.data[0]).every(Number.isFinite)).toBe(true)
  })
})
