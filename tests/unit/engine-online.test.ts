import { describe, expect, it } from 'vitest'
import { buildTrialSet, planEpochs } from '~/engine/epochs'
import { quadForm } from '~/engine/linalg'
import { trainDecoder } from '~/engine/decoder'
import { createOnlineDecoder } from '~/engine/online'
import { simulateImagery } from '~/engine/synthetic'

const sim = simulateImagery({ seed: 5, trialsPerClass: 20 })
const rec = sim.recording
const C = rec.channels.length
const N = rec.data[0].length
const decoder = trainDecoder(rec, { method: 'csp', trainedAt: '2026-01-01T00:00:00.000Z' })

function interleaved(from: number, to: number): Float32Array {
  const out = new Float32Array((to - from) * C)
  for (let s = from; s < to; s++) for (let c = 0; c < C; c++) out[(s - from) * C + c] = rec.data[c][s]
  return out
}

/** Pushes the recording in blocks; records outputs at each block end. */
function replay(blockSize: number, d = decoder): Map<number, { output: number; power: number[] }> {
  const online = createOnlineDecoder(d)
  const at = new Map<number, { output: number; power: number[] }>()
  for (let s = 0; s < N; s += blockSize) {
    const end = Math.min(N, s + blockSize)
    const o = online.push(interleaved(s, end), end - s)
    at.set(end, { output: o.output, power: Array.from(o.bandPower) })
  }
  return at
}

describe('online decoder', () => {
  it('is deterministic: a replay through a fresh decoder gives bit-identical outputs', () => {
    const a = replay(16)
    const b = replay(16)
    expect([...b.entries()]).toEqual([...a.entries()])
  })

  it('is block-size invariant: blocks of 1, 7 and 32 agree bit for bit at shared sample counts', () => {
    const one = replay(1)
    for (const size of [7, 32]) {
      for (const [end, v] of replay(size)) expect(one.get(end)).toEqual(v)
    }
  })

  it('online band power at each epoch end equals the training feature of that trial', () => {
    // Training features: log(w' S w / n) from the epoch's second moments after the same causal filter.
    const plan = planEpochs(rec, decoder.classes, decoder.epoch)
    const set = buildTrialSet(rec, plan, { band: decoder.band, order: decoder.filterOrder, notchHz: decoder.notchHz })
    const online = createOnlineDecoder(decoder)
    let pushed = 0
    plan.trials.forEach((trial, t) => {
      const end = trial.start + plan.length
      const o = online.push(interleaved(pushed, end), end - pushed)
      pushed = end
      expect(o.ready).toBe(true)
      decoder.filters.forEach((w, k) => {
        const offline = Math.log(quadForm(w, set.outer[t], C) / set.samples[t])
        expect(Math.abs(o.bandPower[k] - offline)).toBeLessThan(1e-9)
      })
    })
  })

  it('reuses its output object and display buffer, and reset() restarts from rest', () => {
    const online = createOnlineDecoder(decoder)
    const block = interleaved(0, 16)
    const first = online.push(block, 16)
    const buffer = first.filtered
    const firstOutput = first.output
    for (let i = 0; i < 10; i++) expect(online.push(block, 16)).toBe(first)
    expect(first.filtered).toBe(buffer)
    expect(first.filtered.length).toBe(16 * C)
    online.reset()
    expect(online.push(block, 16).output).toBe(firstOutput)
  })

  it('rejects a block that is shorter than its sample count says', () => {
    const online = createOnlineDecoder(decoder)
    expect(() => online.push(new Float32Array(5), 16)).toThrow(/need 16/)
  })

  it('a non-finite input value is counted and replaced by 0 instead of poisoning the filter state', () => {
    const online = createOnlineDecoder(decoder)
    const block = interleaved(0, 16)
    block[5] = Number.NaN
    block[9] = Number.POSITIVE_INFINITY
    expect(online.push(block, 16).invalidValues).toBe(2)
    const next = online.push(interleaved(16, 600), 584)
    expect(next.invalidValues).toBe(0)
    expect(Number.isFinite(next.output)).toBe(true)
    expect(Array.from(next.filtered).every(Number.isFinite)).toBe(true)
  })

  it('a decoder saved as JSON and loaded again decodes identically', () => {
    const restored = JSON.parse(JSON.stringify(decoder))
    const a = replay(32)
    const b = replay(32, restored)
    expect([...b.entries()]).toEqual([...a.entries()])
  })
})
