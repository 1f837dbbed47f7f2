// The generative model's parts against published formulas and its own contracts
// (determinism, block-size invariance, clear errors).
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { STANDARD_POSITIONS } from '../../app/engine/montage'
import { readRecording } from '../../app/engine/formats/index'
import { resolveChannels, sensorimotorChannels, simulatorPositionFor } from '../../simulator/channels'
import { parseSimulateArgs } from '../../simulator/cli-args'
import { writeSimulatedRecording } from '../../simulator/file-mode'
import { CONDUCTIVITY_S_PER_M, dipolePotentialV, leadfieldColumnUvPerNam, pointBeneath } from '../../simulator/forward-model'
import { NO_ARTIFACTS, createSimulatedParticipant, type CueEvent } from '../../simulator/generator'
import { designPinkingFilter, designResonator } from '../../simulator/noise-filters'
import { DEFAULT_PARTICIPANT, decideTrial, impliedAccuracy } from '../../simulator/participant'
import { createRandomStream } from '../../simulator/random'
import { balancedTrialSchedule } from '../../simulator/schedule'

describe('forward model', () => {
  it('equals the limit of a current source and sink (point-source potential I/(4πσr), Malmivuo & Plonsey 1995)', () => {
    const location = { x: 0.01, y: -0.02, z: 0.05 }
    const direction = { x: 0.3, y: -0.5, z: 0.8 }
    const n = Math.hypot(direction.x, direction.y, direction.z)
    const current = 1e-3 // A
    const spacing = 1e-6 // m: moment = current × spacing
    const electrode = { x: -0.03, y: 0.02, z: 0.08 }
    const monopole = (sign: number) => {
      const p = { x: location.x + (sign * spacing * direction.x) / n / 2, y: location.y + (sign * spacing * direction.y) / n / 2, z: location.z + (sign * spacing * direction.z) / n / 2 }
      const r = Math.hypot(electrode.x - p.x, electrode.y - p.y, electrode.z - p.z)
      return (sign * current) / (4 * Math.PI * CONDUCTIVITY_S_PER_M * r)
    }
    const pair = monopole(1) + monopole(-1)
    const moment = current * spacing
    const dipole = dipolePotentialV({ location, moment: { x: (moment * direction.x) / n, y: (moment * direction.y) / n, z: (moment * direction.z) / n } }, electrode)
    expect(dipole).toBeCloseTo(pair, 12)
    expect(Math.abs(dipole - pair) / Math.abs(pair)).toBeLessThan(1e-6)
  })

  it('a radial source under C3 is largest at C3 and tens of µV for tens of nA·m (EEG amplitudes, common practice)', () => {
    const names = Object.keys(STANDARD_POSITIONS)
    const c3 = STANDARD_POSITIONS.C3
    const column = leadfieldColumnUvPerNam(pointBeneath(c3, 0.028), c3, names.map((n) => STANDARD_POSITIONS[n]))
    const best = names[column.indexOf(Math.max(...column))]
    expect(best).toBe('C3')
    const at20nAm = 20 * column[names.indexOf('C3')]
    expect(at20nAm).toBeGreaterThan(5)
    expect(at20nAm).toBeLessThan(100)
  })

  it("average reference removes the montage mean", () => {
    const sites = sensorimotorChannels(16)
    const col = leadfieldColumnUvPerNam(pointBeneath(STANDARD_POSITIONS.C4, 0.03), STANDARD_POSITIONS.C4, sites, 'average')
    expect(Math.abs(col.reduce((a, b) => a + b, 0))).toBeLessThan(1e-9)
  })
})

describe('noise filters', () => {
  it('the resonator has unit variance and its spectral peak exactly at the asked frequency', () => {
    for (const [f, bw, fs] of [[11, 3, 250], [22, 6, 1000], [10, 2, 500]]) {
      const r = designResonator(f, bw, fs)
      // |H(e^jω)|² on a fine grid: argmax must be the asked frequency.
      let bestF = 0
      let best = 0
      for (let k = 1; k < 40000; k++) {
        const fk = (k / 40000) * (fs / 2)
        const w = (2 * Math.PI * fk) / fs
        const re = 1 - r.a1 * Math.cos(w) - r.a2 * Math.cos(2 * w)
        const im = r.a1 * Math.sin(w) + r.a2 * Math.sin(2 * w)
        const h = 1 / (re * re + im * im)
        if (h > best) [best, bestF] = [h, fk]
      }
      expect(Math.abs(bestF - f)).toBeLessThan(fs / 2 / 40000 + 1e-9)
      // Output variance of unit white noise ≈ 1 (sum of the squared impulse response).
      let y1 = 0
      let y2 = 0
      let energy = 0
      for (let n = 0; n < 200_000; n++) {
        const y = r.a1 * y1 + r.a2 * y2 + (n === 0 ? r.gain : 0)
        energy += y * y
        y2 = y1
        y1 = y
      }
      expect(energy).toBeCloseTo(1, 6)
    }
  })

  it('the pinking filter falls about 10 dB per decade (1/f power) between 2 and 50 Hz', () => {
    const fs = 500
    const p = designPinkingFilter(fs)
    const power = (f: number) => {
      const w = (2 * Math.PI * f) / fs
      let h = 1
      for (let m = 0; m < p.poles.length; m++) {
        const num = 1 - 2 * p.zeros[m] * Math.cos(w) + p.zeros[m] ** 2
        const den = 1 - 2 * p.poles[m] * Math.cos(w) + p.poles[m] ** 2
        h *= num / den
      }
      return h
    }
    const dbPerDecade = 10 * Math.log10(power(50) / power(5))
    expect(dbPerDecade).toBeGreaterThan(-11.5)
    expect(dbPerDecade).toBeLessThan(-8.5)
    expect(10 * Math.log10(power(20) / power(2))).toBeCloseTo(dbPerDecade, 0)
  })
})

describe('participant model', () => {
  it('implied accuracy: skill 1 is the attentive accuracy; skill 0 with no-response lapses is chance', () => {
    expect(impliedAccuracy(1, 2, 0.3, 0.9)).toBeCloseTo(0.9, 12)
    expect(impliedAccuracy(0, 2, 0, 1)).toBeCloseTo(0.5, 12)
    expect(impliedAccuracy(0, 3, 0, 1)).toBeCloseTo(1 / 3, 12)
    expect(impliedAccuracy(0.8, 2, 0.3, 1)).toBeCloseTo(0.8 + 0.2 * 0.35, 12)
  })

  it('lapses occur at rate 1 − skill (binomial, 4 standard errors)', () => {
    fc.assert(
      fc.property(fc.double({ min: 0.1, max: 0.95, noNaN: true }), fc.integer({ min: 1, max: 1e6 }), (skill, seed) => {
        const random = createRandomStream(seed)
        const n = 2000
        let cued = 0
        for (let t = 0; t < n; t++) if (decideTrial({ ...DEFAULT_PARTICIPANT, skill }, random, t, 'left', ['left', 'right'], 0, 0).outcome === 'as-cued') cued++
        return Math.abs(cued / n - skill) < 4 * Math.sqrt((skill * (1 - skill)) / n)
      }),
      { numRuns: 20 },
    )
  })

  it('fatigue weakens the planted depth over the session', () => {
    const random = createRandomStream(1)
    const s = { ...DEFAULT_PARTICIPANT, skill: 1, depthSpread: 0, fatiguePerHour: 0.2 }
    expect(decideTrial(s, random, 0, 'right', ['left', 'right'], 0, 0).depth).toBeCloseTo(0.3, 12)
    expect(decideTrial(s, random, 1, 'right', ['left', 'right'], 3600, 0).depth).toBeCloseTo(0.24, 12)
  })
})

describe('generator', () => {
  const base = { channels: sensorimotorChannels(8), rateHz: 250, seed: 11 }
  const cues: CueEvent[] = [
    { trial: 0, label: 'left', phase: 'cue', atSample: 100 },
    { trial: 0, label: 'left', phase: 'rest', atSample: 600 },
    { trial: 1, label: 'right', phase: 'cue', atSample: 900 },
    { trial: 1, label: 'right', phase: 'end', atSample: 1400 },
  ]

  it('gives the same samples for any block sizes (state carried across blocks)', () => {
    const whole = createSimulatedParticipant(base)
    for (const c of cues) whole.cue(c)
    const reference = whole.generate(2000)
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 1, max: 300 }), { minLength: 1, maxLength: 40 }), (sizes) => {
        const p = createSimulatedParticipant(base)
        for (const c of cues) p.cue(c)
        const out = new Float32Array(2000 * 8)
        let at = 0
        for (let i = 0; at < 2000; i++) {
          const n = Math.min(sizes[i % sizes.length], 2000 - at)
          out.set(p.generate(n), at * 8)
          at += n
        }
        return out.every((v, i) => v === reference[i])
      }),
      { numRuns: 15 },
    )
  })

  it('the same seed gives the same samples; another seed differs', () => {
    const a = createSimulatedParticipant(base).generate(500)
    const b = createSimulatedParticipant(base).generate(500)
    const c = createSimulatedParticipant({ ...base, seed: 12 }).generate(500)
    expect(a).toEqual(b)
    expect(a).not.toEqual(c)
  })

  it('amplitudes are tens of microvolts; flat channels are zero and noisy ones stand out', () => {
    const p = createSimulatedParticipant({ ...base, artifacts: { flatChannels: ['CP3'], noisyChannels: ['FC4'] } })
    const x = p.generate(250 * 20)
    const rms = (c: number) => Math.sqrt(x.filter((_, i) => i % 8 === c).reduce((s, v) => s + v * v, 0) / (x.length / 8))
    const names = p.channels.map((c) => c.name)
    const c3 = rms(names.indexOf('C3'))
    expect(c3).toBeGreaterThan(5)
    expect(c3).toBeLessThan(60)
    expect(rms(names.indexOf('CP3'))).toBe(0)
    expect(rms(names.indexOf('FC4'))).toBeGreaterThan(2 * c3)
  })

  it('records every cue it acted on with the outcome and depth', () => {
    const p = createSimulatedParticipant({ ...base, participant: { skill: 1, depthSpread: 0, fatiguePerHour: 0 } })
    for (const c of cues) p.cue(c)
    p.generate(2000)
    const trials = p.truth().trials
    expect(trials.map((t) => [t.cued, t.performed, t.outcome, t.depth])).toEqual([
      ['left', 'left', 'as-cued', 0.3],
      ['right', 'right', 'as-cued', 0.3],
    ])
    // Reaction time 0.35 s after the cue.
    expect(trials[0].startSample).toBe(100 + Math.round(0.35 * 250))
  })

  it('beta power overshoots its resting level after the imagery ends (post-imagery beta rebound, Pfurtscheller & Lopes da Silva 1999)', () => {
    const rateHz = 250
    const p = createSimulatedParticipant({
      channels: ['C3', 'Cz', 'C4'], rateHz, seed: 21, artifacts: NO_ARTIFACTS,
      rhythms: { muUv: 0, alphaUv: 0, backgroundUv: 0, sensorNoiseUv: 0 }, participant: { skill: 1, betaRebound: 0.5, depthSpread: 0 },
    })
    const trialSamples = 10 * rateHz
    for (let t = 0; t < 40; t++) {
      const cue = t * trialSamples + 3 * rateHz
      p.cue({ trial: t, label: 'right', phase: 'cue', atSample: cue })
      p.cue({ trial: t, label: 'right', phase: 'rest', atSample: cue + 3 * rateHz })
    }
    const x = p.generate(40 * trialSamples)
    const power = (from: number, to: number) => {
      let sum = 0
      for (let s = from; s < to; s++) sum += x[s * 3] ** 2 // C3
      return sum / (to - from)
    }
    let baseline = 0
    let imagery = 0
    let rebound = 0
    for (let t = 0; t < 40; t++) {
      const cue = t * trialSamples + 3 * rateHz
      baseline += power(cue - 2 * rateHz, cue)
      imagery += power(cue + rateHz, cue + 3 * rateHz)
      rebound += power(cue + 3.5 * rateHz, cue + 4.5 * rateHz)
    }
    expect(imagery / baseline).toBeLessThan(0.85)
    expect(rebound / baseline).toBeGreaterThan(1.15)
  })

  it('rejects bad settings with messages that name them', () => {
    expect(() => createSimulatedParticipant({ ...base, rateHz: 10 })).toThrow(/sample rate/)
    expect(() => createSimulatedParticipant({ ...base, channels: ['C3', 'XX9'] })).toThrow(/XX9/)
    expect(() => createSimulatedParticipant({ ...base, channels: ['C3', 'C3'] })).toThrow(/twice/)
    expect(() => createSimulatedParticipant({ ...base, classes: ['left', 'tongue'] })).toThrow(/tongue/)
    expect(() => createSimulatedParticipant({ ...base, participant: { skill: 1.5 } })).toThrow(/skill/)
    expect(() => createSimulatedParticipant({ ...base, artifacts: { mainsHz: 55 as 50 } })).toThrow(/mains/)
    expect(() => createSimulatedParticipant({ ...base, artifacts: { flatChannels: ['O1'] } })).toThrow(/O1/)
    const p = createSimulatedParticipant({ ...base, artifacts: NO_ARTIFACTS })
    expect(() => p.setArtifacts({ noisyChannels: ['Oz'] })).toThrow(/Oz/)
    expect(() => p.generate(10)).not.toThrow() // a refused change leaves the device working
  })
})

describe('channels, schedule and file mode', () => {
  it('22 channels around C3/Cz/C4 start with the three centres; 10-5 half sites lie between their neighbours', () => {
    const names = sensorimotorChannels(22).map((c) => c.name)
    expect(names.slice(0, 3).sort()).toEqual(['C3', 'C4', 'Cz'])
    expect(sensorimotorChannels(128)).toHaveLength(128)
    const h = simulatorPositionFor('C3h')!
    // Halfway (on the sphere) between C3 and C1 (Oostenveld & Praamstra 2001).
    const angle = (a: { x: number; y: number; z: number }, b: { x: number; y: number; z: number }) => Math.acos(a.x * b.x + a.y * b.y + a.z * b.z)
    expect(angle(h, STANDARD_POSITIONS.C3)).toBeCloseTo(angle(h, STANDARD_POSITIONS.C1), 9)
    expect(() => resolveChannels([])).toThrow(/at least one/)
  })

  it('the schedule is block-randomised: balanced after every block of one trial per class', () => {
    const s = balancedTrialSchedule(['left', 'right', 'feet'], 10, 250, 3)
    expect(s.trials).toHaveLength(30)
    for (let b = 0; b < 10; b++) expect(s.trials.slice(b * 3, b * 3 + 3).map((t) => t.label).sort()).toEqual(['feet', 'left', 'right'])
    for (const t of s.trials) expect(t.cueSample - t.fixationSample).toBe(500)
  })

  it('writes an EDF+ file that reads back with cues named by class; the same seed gives the same bytes', () => {
    const options = { format: 'edf' as const, channels: sensorimotorChannels(10), rateHz: 200, seed: 9, trialsPerClass: 3, classes: ['left', 'right', 'feet'] }
    const a = writeSimulatedRecording(options)
    const b = writeSimulatedRecording(options)
    expect(Buffer.from(a.bytes).equals(Buffer.from(b.bytes))).toBe(true)
    const back = readRecording(a.bytes, 'sim.edf')
    expect(back.channels).toEqual(a.recording.channels)
    expect(back.rateHz).toBe(200)
    expect(back.cues).toEqual(a.recording.cues)
    expect(a.truth.trials).toHaveLength(9)
  })

  it('command-line options: file and live mode, with clear errors', () => {
    const file = parseSimulateArgs(['--out', 'x.bdf', '--channels', '22', '--skill', '0.6', '--classes', 'left,right,feet'])
    expect(file).toMatchObject({ mode: 'file', format: 'bdf', classes: ['left', 'right', 'feet'], participant: { skill: 0.6 } })
    expect(file.channels).toHaveLength(22)
    const live = parseSimulateArgs(['--url', 'ws://127.0.0.1:4100/ingest', '--token', 'tdev_abcdefgh', '--montage', '16', '--faults', 'drop=0.01,jitter=20'])
    expect(live).toMatchObject({ mode: 'live', faults: { dropRate: 0.01, jitterMs: 20 } })
    expect(live.channels).toHaveLength(16)
    expect(() => parseSimulateArgs([])).toThrow(/--out/)
    expect(() => parseSimulateArgs(['--out', 'x.edf', '--skill', '2'])).toThrow(/--skill/)
    expect(() => parseSimulateArgs(['--url', 'ws://x/ingest'])).toThrow(/--token/)
    expect(() => parseSimulateArgs(['--out', 'x.edf', '--montage', 'nonsense'])).toThrow(/preset/)
    expect(() => parseSimulateArgs(['--out', 'x.edf', '--faults', 'explode=1'])).toThrow(/unknown fault/)
  })
})
