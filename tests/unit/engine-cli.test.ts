import { afterEach, describe, expect, it, vi } from 'vitest'
import { fileURLToPath } from 'node:url'
import mneRead from '../fixtures/engine/imagery-8ch.json'
import { run as compare } from '~/cli/commands/compare'
import { loadRecording, run as train } from '~/cli/commands/train'

// imagery-8ch.edf is written byte by byte from the EDF+ specification by
// tests/fixtures/engine/make_imagery_edf.py (not by Tiller) and read back there by
// mne.io.read_raw_edf; imagery-8ch.json holds what MNE read.
const file = fileURLToPath(new URL('../fixtures/engine/imagery-8ch.edf', import.meta.url))

async function captureJson(fn: () => Promise<number>): Promise<{ code: number; json: any }> {
  const lines: string[] = []
  const spy = vi.spyOn(console, 'log').mockImplementation((s: unknown) => void lines.push(String(s)))
  try {
    const code = await fn()
    expect(lines).toHaveLength(1)
    return { code, json: JSON.parse(lines[0]) }
  } finally {
    spy.mockRestore()
  }
}

afterEach(() => vi.restoreAllMocks())

describe('tiller train / compare on a file Tiller did not write', () => {
  it('reads the same channels, samples and cues as mne.io.read_raw_edf', () => {
    const rec = loadRecording(file)
    expect(rec.channels).toEqual(mneRead.channels)
    expect(rec.rateHz).toBe(mneRead.rateHz)
    expect(rec.data[0].length).toBe(mneRead.samples)
    mneRead.firstSamplesUv.forEach((row, c) => row.forEach((v, s) => expect(rec.data[c][s]).toBeCloseTo(v, 3)))
    expect(rec.cues.map((c) => [c.sample / rec.rateHz, c.label])).toEqual(mneRead.cues.map((c) => [c.onset, c.label]))
  })

  it('train --json prints one object with the fields the issue lists', async () => {
    const { code, json } = await captureJson(() => train([file, '--method', 'csp', '--band', '8-30', '--window', '0.5-2.5', '--classes', 'left,right', '--folds', '5', '--json']))
    expect(code).toBe(0)
    expect(json.method).toBe('csp')
    expect(json.channels).toHaveLength(8)
    expect(json.classes).toEqual(['left', 'right'])
    expect(json.band).toEqual([8, 30])
    expect(json.cv.accuracy).toBeGreaterThan(0.85)
    expect(json.cv.accuracy).toBeGreaterThan(json.cv.chanceLevel)
    expect(typeof json.cv.kappa).toBe('number')
    expect(json.cv.confusion).toHaveLength(2)
    expect(json.cv.folds).toHaveLength(5)
    expect(json.decoder.filters).toHaveLength(6)
    expect(json.decoder.filters[0]).toHaveLength(8)
    expect(json.decoder.patterns).toHaveLength(6)
    expect(json.decoder.patterns[0]).toHaveLength(8)
    expect(json.decoder.lda.weights[0]).toHaveLength(6)
    expect(json.decoder.lda.bias).toHaveLength(1)
  })

  it('compare --json tabulates every method; CSP beats raw channels', async () => {
    const { code, json } = await captureJson(() => compare([file, '--json', '--methods', 'none,car,laplacian-small,csp,rcsp,fbcsp']))
    expect(code).toBe(0)
    const acc = Object.fromEntries(json.methods.map((r: any) => [r.method, r.accuracy]))
    expect(acc.csp).toBeGreaterThan(acc.none)
    expect(acc.car).toBeGreaterThan(acc.none)
    expect(acc['laplacian-small']).toBeGreaterThan(acc.none)
  })

  it('a bad option or a missing file gives a clear error', async () => {
    await expect(train([file, '--band', 'low'])).rejects.toThrow(/--band expects a range/)
    await expect(train(['/nonexistent.edf'])).rejects.toThrow(/cannot read/)
    await expect(train([file, '--method', 'magic'])).rejects.toThrow(/unknown method/)
  })
})
