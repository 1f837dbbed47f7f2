// CSV recordings: `time_s,<channels...>[,cue]`, microvolts, RFC 4180 quoting.
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { RecordingFormatError, readCsv, readRecording, writeRecording } from '../../app/engine/formats/index'
import type { Recording } from '../../app/engine/recording'
import { sensorimotorRecording } from '../fixtures/formats/sample-recordings'

const enc = (s: string) => new TextEncoder().encode(s)
const dec = (b: Uint8Array) => new TextDecoder().decode(b)
function errorOf(f: () => unknown): RecordingFormatError {
  try {
    f()
  } catch (e) {
    expect(e).toBeInstanceOf(RecordingFormatError)
    return e as RecordingFormatError
  }
  throw new Error('expected a RecordingFormatError')
}

describe('CSV writing', () => {
  const rec = sensorimotorRecording()
  const text = dec(writeRecording(rec, 'csv'))
  const lines = text.split('\n')

  it('has the header, times in seconds, µV values and cue names on onset rows only', () => {
    expect(lines[0]).toBe('time_s,C3,Cz,C4,FCz,cue')
    expect(lines[1].split(',')[0]).toBe('0')
    expect(lines[2].split(',')[0]).toBe('0.004') // 1 / 250 Hz
    expect(lines[251].split(',').at(-1)).toBe('left') // sample 250
    expect(lines[250].split(',').at(-1)).toBe('')
    expect(lines.filter((l) => /,(left|right|feet)$/.test(l)).length).toBe(4)
  })

  it('round-trips every float32 sample exactly', () => {
    const back = readCsv(writeRecording(rec, 'csv'))
    expect(back.channels).toEqual(rec.channels)
    expect(back.rateHz).toBe(250)
    back.data.forEach((d, c) => expect(Array.from(d)).toEqual(Array.from(rec.data[c])))
    expect(back.cues).toEqual(rec.cues)
  })

  it('omits the cue column without cues and quotes names that need it', () => {
    const r: Recording = { channels: ['a,b', 'say "hi"'], rateHz: 2, data: [Float32Array.of(1, 2), Float32Array.of(3, 4)], cues: [], annotations: [] }
    const t = dec(writeRecording(r, 'csv'))
    expect(t.split('\n')[0]).toBe('time_s,"a,b","say ""hi"""')
    expect(readCsv(enc(t)).channels).toEqual(r.channels)
  })
})

describe('CSV from an independent writer (Python csv module, write_python_csv.py)', () => {
  it('reads channels, rate from 3-decimal times, values and joined cues', () => {
    const dir = join(__dirname, '../fixtures/formats')
    const expected = JSON.parse(readFileSync(join(dir, 'python-written.json'), 'utf8'))
    const r = readRecording(new Uint8Array(readFileSync(join(dir, 'python-written.csv'))), 'python-written.csv')
    expect(r.channels).toEqual(expected.channels)
    expect(r.rateHz).toBe(expected.rateHz)
    expect(r.data[0].length).toBe(expected.samples)
    r.data.forEach((d, c) => d.forEach((v, i) => expect(v).toBe(Math.fround(expected.data_uv[c][i]))))
    expect(r.cues).toEqual(expected.cues)
  })
})

describe('CSV errors name the line and column', () => {
  it.each([
    ['', /the file is empty/],
    ['time_s;C3\n0;1\n', /line 1: expected a header .* \(columns must be separated by commas\)/],
    ['t,C3\n0,1\n0.1,2\n', /line 1: the first column must be 'time_s'/],
    ['time_s,C3,C3\n0,1,1\n1,1,1\n', /line 1: channel 'C3' appears twice/],
    ['time_s,cue\n0,\n1,\n', /no channel columns/],
    ['time_s,C3\n0,1\n', /1 data row; at least 2/],
    ['time_s,C3\n0,1\n0.01,abc\n', /line 3, column 'C3': 'abc' is not a number/],
    ['time_s,C3\n0,1\n0.01,\n', /line 3, column 'C3': '' is not a number/],
    ['time_s,C3\n0,1\n0.01,0x10\n', /'0x10' is not a number/],
    ['time_s,C3\n0,1\n0.01,1e999\n', /out of range/],
    ['time_s,C3\n0,1\n0.01,1,2\n', /line 3: 3 columns, the header has 2/],
    ['time_s,C3\n0,1\n0.01,1\n0.01,1\n0.03,1\n', /line 4, column time_s: 0.01 s does not follow 0.01 s/],
    ['time_s,C3\n0,1\n0.01,1\n0.02,1\n0.05,1\n0.06,1\n0.07,1\n', /off the even spacing/],
    ['time_s,C3\n0,1\n0.01,"1\n', /quoted field is not closed/],
  ])('%j', (input, message) => {
    expect(errorOf(() => readCsv(enc(input))).message).toMatch(message)
  })

  it('filters cues by cueLabels when given', () => {
    const r = readCsv(enc('time_s,C3,cue\n0,1,rest\n0.5,1,left\n'), { cueLabels: ['left'] })
    expect(r.cues).toEqual([{ sample: 1, label: 'left' }])
    expect(r.rateHz).toBe(2)
  })
})

describe('CSV round trip property (fast-check)', () => {
  it('any finite float32 values and cue placement come back exactly (300 cases)', async () => {
    const fc = (await import('fast-check')).default
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 4 }), fc.integer({ min: 2, max: 60 }), fc.constantFrom(128, 250, 256, 500, 512, 1000, 2048),
        fc.array(fc.float({ noNaN: true, noDefaultInfinity: true }), { minLength: 240, maxLength: 240 }),
        fc.array(fc.tuple(fc.nat(), fc.constantFrom('left', 'right', 'feet', 'rest')), { maxLength: 5 }),
        (ch, n, rateHz, pool, cuePicks) => {
          const data = Array.from({ length: ch }, (_, c) => Float32Array.from({ length: n }, (_, i) => pool[(c * 60 + i) % pool.length]))
          const cues = [...new Map(cuePicks.map(([at, label]) => [at % n, label])).entries()].map(([sample, label]) => ({ sample, label })).sort((a, b) => a.sample - b.sample)
          const rec: Recording = { channels: data.map((_, c) => `E${c}`), rateHz, data, cues, annotations: [] }
          const back = readCsv(writeRecording(rec, 'csv'))
          expect(back.rateHz).toBe(rateHz)
          back.data.forEach((d, c) => d.forEach((v, i) => expect(Object.is(v, data[c][i]) || v === data[c][i]).toBe(true)))
          expect(back.cues).toEqual(cues)
        },
      ),
      { numRuns: 300, seed: 9 },
    )
  })
})
