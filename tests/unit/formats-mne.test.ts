import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { readRecording, writeRecording } from '../../app/engine/formats/index'
import { readEdfWithDetails } from '../../app/engine/formats/edf'
import { parseHeader } from '../../app/engine/formats/edf-header'
import type { Recording } from '../../app/engine/recording'
import { paddedRecording, sensorimotorRecording } from '../fixtures/formats/sample-recordings'

const dir = join(__dirname, '../fixtures/formats')
const bytes = (name: string) => new Uint8Array(readFileSync(join(dir, name)))
const json = (name: string) => JSON.parse(readFileSync(join(dir, name), 'utf8'))

interface MneView {
  ch_names: string[]
  sfreq: number
  n_times: number
  data_uv: number[][]
  annotations: { onset: number; duration: number; description: string }[]
  meas_date: string | null
}

// (a) Files Tiller wrote, as mne.io.read_raw_edf / read_raw_bdf (python3-mne) saw them.
// Fixtures: make_tiller_files.ts writes the files, mne_read_tiller.py records MNE's view.
describe.each([
  ['tiller-sensorimotor.edf', sensorimotorRecording, 'edf'],
  ['tiller-sensorimotor.bdf', sensorimotorRecording, 'bdf'],
  ['tiller-padded.edf', paddedRecording, 'edf'],
] as const)('MNE reads Tiller\'s %s', (file, make, format) => {
  const original: Recording = make()
  const mne: MneView = json(`mne-read-${file.replace(/\./g, '-')}.json`)
  const written = bytes(file)

  it('is what the writer produces today (else regenerate the fixtures)', () => {
    expect(Buffer.from(writeRecording(original, format)).equals(Buffer.from(written))).toBe(true)
  })

  it('has the same channel names, rate and sample count', () => {
    expect(mne.ch_names).toEqual(original.channels)
    expect(mne.sfreq).toBe(original.rateHz)
    const n = original.data[0].length
    // The last data record is padded when no record length divides the recording.
    const spr = parseHeader(written).signals[0].samplesPerRecord
    expect(mne.n_times).toBe(Math.ceil(n / spr) * spr)
  })

  it('has every sample to within half a quantisation step', () => {
    const header = parseHeader(written)
    original.data.forEach((d, c) => {
      const s = header.signals[c]
      const step = (s.physicalMax - s.physicalMin) / (s.digitalMax - s.digitalMin)
      // JSON holds MNE's values rounded to 1e-5 µV; float32 input adds ~1e-5 relative.
      const tol = step / 2 + 0.6e-5 + 1e-6 * 100
      let worst = 0
      for (let i = 0; i < d.length; i++) worst = Math.max(worst, Math.abs(mne.data_uv[c][i] - d[i]))
      expect(worst, `${original.channels[c]} step ${step}`).toBeLessThanOrEqual(tol)
    })
  })

  it('agrees with Tiller\'s own reader sample for sample', () => {
    const back = readRecording(written, file)
    back.data.forEach((d, c) => {
      for (let i = 0; i < d.length; i++) expect(Math.abs(d[i] - mne.data_uv[c][i])).toBeLessThan(1e-5 + 1e-6 * Math.abs(d[i]))
    })
  })

  it('has the cues (text = class name, onset at the cue) and annotations', () => {
    const expected = [
      ...original.cues.map((c) => ({ onset: c.sample / original.rateHz, duration: 0, description: c.label })),
      ...original.annotations.map((a) => ({ onset: a.onsetSeconds, duration: a.durationSeconds, description: a.text })),
    ].sort((a, b) => a.onset - b.onset)
    const seen = [...mne.annotations].sort((a, b) => a.onset - b.onset)
    expect(seen.length).toBe(expected.length)
    seen.forEach((a, i) => {
      expect(a.description).toBe(expected[i].description)
      // MNE keeps raw annotation onsets at microsecond resolution (0.1953125 s -> 0.195312 s).
      expect(Math.abs(a.onset - expected[i].onset)).toBeLessThanOrEqual(1e-6)
      expect(a.duration).toBeCloseTo(expected[i].duration, 9)
    })
  })

  it('has the start date', () => {
    if (original.meta?.startDate) expect(new Date(mne.meas_date as string).getTime()).toBe(original.meta.startDate.getTime())
  })
})

// (b) Files written byte by byte from the EDF/EDF+/BDF specifications by an independent
// script (write_spec_files.py, struct + numpy; MNE confirmed its values when it ran).
describe('files written from the specification by an independent script', () => {
  const spec = json('spec-files.json')

  it('EDF+: channels, rate, physical values, units, cues, annotations and header fields', () => {
    const e = spec.edf
    const { recording, skippedSignals } = readEdfWithDetails(bytes(e.file))
    expect(recording.channels).toEqual(e.channels)
    expect(skippedSignals.map((s) => s.label)).toEqual(e.skipped) // EMG at 512 Hz, EEG at 256 Hz
    expect(recording.rateHz).toBe(e.rateHz)
    expect(recording.data[0].length).toBe(e.samples)
    recording.data.forEach((d, c) => {
      for (let i = 0; i < d.length; i++) {
        // Float32 output: relative 2^-24, plus the digit noise of decimal physical limits.
        expect(Math.abs(d[i] - e.data_uv[c][i]), `${e.channels[c]}[${i}]`).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(e.data_uv[c][i])))
      }
    })
    expect(recording.cues).toEqual(e.cues)
    expect(recording.annotations.map((a) => ({ ...a, onsetSeconds: +a.onsetSeconds.toFixed(9) }))).toEqual(e.annotations)
    expect(recording.meta?.patientId).toBe(e.patientId)
    expect(recording.meta?.recordingId).toBe(e.recordingId)
    expect(recording.meta?.startDate?.toISOString()).toBe(e.startDate)
  })

  it('BDF: 24-bit samples including both digital extremes', () => {
    const b = spec.bdf
    const recording = readRecording(bytes(b.file), b.file)
    expect(recording.channels).toEqual(b.channels)
    expect(recording.rateHz).toBe(b.rateHz)
    expect(recording.data[0].length).toBe(b.samples)
    recording.data.forEach((d, c) => {
      for (let i = 0; i < d.length; i++) {
        expect(Math.abs(d[i] - b.data_uv[c][i])).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(b.data_uv[c][i])))
      }
    })
    expect(recording.meta?.startDate?.toISOString()).toBe(b.startDate)
  })

  it('reads the same when the file arrives in small chunks', async () => {
    const { createEdfParser } = await import('../../app/engine/formats/index')
    const file = bytes(spec.edf.file)
    const whole = readRecording(file, 'x.edf')
    const parser = createEdfParser()
    for (let i = 0; i < file.length; i += 777) parser.push(file.subarray(i, i + 777))
    const chunked = parser.end()
    expect(chunked.channels).toEqual(whole.channels)
    chunked.data.forEach((d, c) => expect(Array.from(d)).toEqual(Array.from(whole.data[c])))
    expect(chunked.cues).toEqual(whole.cues)
  })
})
