import { describe, expect, it } from 'vitest'
import fx from '../fixtures/engine/quality.json'
import { channelQuality, welch } from '~/engine/quality'
import { seededNormal } from '~/engine/linalg'

describe('Welch spectrum', () => {
  // Source: scipy.signal.welch(x, fs, nperseg) defaults, from make_quality.py.
  for (const ref of fx.cases) {
    it(`matches scipy.signal.welch with nperseg=${ref.segment}`, () => {
      const s = welch(fx.x, fx.rateHz, { segment: ref.segment })
      expect(s.power.length).toBe(ref.power.length)
      const peak = Math.max(...ref.power)
      ref.power.forEach((v, k) => expect(Math.abs(s.power[k] - v)).toBeLessThanOrEqual(1e-9 * peak + 1e-6 * v))
      ref.frequencies.forEach((v, k) => expect(s.frequenciesHz[k]).toBeCloseTo(v, 10))
    })
  }
})

describe('channel quality', () => {
  const rate = 250
  const n = 2500
  const normal = seededNormal(9)
  const eeg = () => Float64Array.from({ length: n }, (_, i) => 15 * Math.sin((2 * Math.PI * 10 * i) / rate + 1) + 8 * normal())
  const good = [eeg(), eeg(), eeg(), eeg()]
  const flat = new Float64Array(n).fill(3) // disconnected electrode: constant offset (common practice)
  const mains = eeg().map((v, i) => v + 60 * Math.sin((2 * Math.PI * 60 * i) / rate))
  const clipped = eeg().map((v) => Math.max(-20, Math.min(20, v * 3)))
  const drifting = eeg().map((v, i) => v + (80 * i) / rate) // 80 µV/s electrode drift
  const names = ['g1', 'g2', 'g3', 'g4', 'flat', 'mains', 'clip', 'drift']
  const q = channelQuality(names, [...good, flat, mains, clipped, drifting], rate)
  const by = Object.fromEntries(q.map((r) => [r.channel, r]))

  it('passes clean EEG-like channels', () => {
    for (const c of ['g1', 'g2', 'g3', 'g4']) expect(by[c].bad, by[c].reasons.join('; ')).toBe(false)
  })
  it('flags a flat line', () => expect(by.flat.flat && by.flat.bad).toBe(true))
  it('finds 60 Hz mains and flags it', () => {
    expect(by.mains.mainsHz).toBe(60)
    expect(by.mains.mainsRatio).toBeGreaterThan(1)
    expect(by.mains.bad).toBe(true)
  })
  it('flags clipping at a plateau', () => expect(by.clip.clippedFraction).toBeGreaterThan(0.01))
  it('measures drift in µV/s', () => {
    expect(by.drift.driftUvPerSecond).toBeCloseTo(80, 0)
    expect(by.drift.bad).toBe(true)
  })
})
