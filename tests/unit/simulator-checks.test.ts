// The simulator checked against reference libraries. tests/fixtures/simulator/check-simulator.py
// measured the fixture recordings with scipy, MNE and scikit-learn; this test regenerates
// each recording from its seed, proves by hash that it is the one measured, and checks the
// measured values against the settings and against published facts.
import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { trainDecoder } from '../../app/engine/decoder'
import { impliedAccuracy } from '../../simulator/participant'
import { simulateRecording } from '../../simulator/simulated-recording'
import { FIXTURE_CASES, recordingHash } from '../fixtures/simulator/cases'

interface SpectrumCheck { peakHz4to40: number; mainsPeakHz: number; mainsProminenceDb: number; binHz: number }
interface FileCheck { channelNames: string[]; sfreq: number; nTimes: number; annotationCount: number; cuesFoundAsAnnotations: number; maxAbsErrorUv: number; maxChannelRangeUv: number }
interface CaseResult {
  hash: string
  spectrum: Record<string, SpectrumCheck>
  files: { edf: FileCheck; bdf: FileCheck; csv: { header: string[]; rows: number } }
  erd?: Record<string, { erdDepth: Record<string, number>; meanPlantedDepth: number; trials: number }>
  csp?: { cvAccuracy: number; patternCorrelation: Record<string, number>; trialOutcomes: Record<string, number> }
}
const fixture = JSON.parse(readFileSync(new URL('../fixtures/simulator/check-simulator.json', import.meta.url), 'utf8')) as { cases: Record<string, CaseResult> }

const generated = new Map(FIXTURE_CASES.map((c) => [c.name, simulateRecording(c.options)]))
const caseNamed = (name: string) => {
  const c = FIXTURE_CASES.find((x) => x.name === name)!
  return { options: c.options, result: fixture.cases[name], ...generated.get(name)! }
}

describe('simulator fixtures describe the current generator', () => {
  for (const c of FIXTURE_CASES) {
    it(`${c.name}: the regenerated recording has the hash the Python checks measured`, () => {
      // If this fails the generator changed: rerun make-inputs.ts and check-simulator.py.
      expect(recordingHash(generated.get(c.name)!.recording)).toBe(fixture.cases[c.name].hash)
    })
  }
})

describe('spectrum (scipy.signal.welch, 4-s Hann segments)', () => {
  for (const c of FIXTURE_CASES) {
    it(`${c.name}: peaks at the configured mu frequency over C3/C4/Cz, mains at exactly ${c.options.artifacts?.mainsHz} Hz`, () => {
      const { result, options } = caseNamed(c.name)
      for (const site of ['C3', 'C4', 'Cz']) {
        const s = result.spectrum[site]
        // Within two Welch bins (0.5 Hz) of the planted mu frequency.
        expect(Math.abs(s.peakHz4to40 - options.rhythms!.muHz!)).toBeLessThanOrEqual(2 * s.binHz)
        // Mains sits exactly on its frequency (50 or 60 Hz, common practice) and well above the floor.
        expect(s.mainsPeakHz).toBe(options.artifacts!.mainsHz)
        expect(s.mainsProminenceDb).toBeGreaterThan(10)
      }
    })
  }
})

describe('event-related desynchronisation (Pfurtscheller & Lopes da Silva 1999)', () => {
  const { result, options } = caseNamed('erd-three-class')
  const erd = result.erd!
  const configured = options.participant!.erdDepth!
  // Tolerance 0.08: the standard error of a trial-averaged band-power ratio over 100 trials of a
  // 3-Hz-wide rhythm is about 0.03, and unmodulated in-band activity (background, neighbouring
  // sources) dilutes the electrode's ERD by a few per cent of the depth.
  const TOLERANCE = 0.08
  it('right-hand imagery desynchronises C3 (contralateral) by the configured depth', () => {
    expect(Math.abs(erd.right.erdDepth.C3 - configured)).toBeLessThanOrEqual(TOLERANCE)
    expect(erd.right.erdDepth.C3 - erd.right.erdDepth.C4).toBeGreaterThan(0.1)
  })
  it('left-hand imagery desynchronises C4 (contralateral) by the configured depth', () => {
    expect(Math.abs(erd.left.erdDepth.C4 - configured)).toBeLessThanOrEqual(TOLERANCE)
    expect(erd.left.erdDepth.C4 - erd.left.erdDepth.C3).toBeGreaterThan(0.1)
  })
  it('feet imagery desynchronises the midline (Cz)', () => {
    expect(Math.abs(erd.feet.erdDepth.Cz - configured)).toBeLessThanOrEqual(TOLERANCE)
    expect(erd.feet.erdDepth.Cz - Math.max(erd.feet.erdDepth.C3, erd.feet.erdDepth.C4)).toBeGreaterThan(0.1)
  })
  it('the planted per-trial depths average the configured depth (fatigue off)', () => {
    for (const label of ['left', 'right', 'feet']) expect(Math.abs(erd[label].meanPlantedDepth - configured)).toBeLessThan(0.03)
  })
})

describe('files read by MNE (mne.io.read_raw_edf / read_raw_bdf)', () => {
  for (const c of FIXTURE_CASES) {
    it(`${c.name}: channel names, rate, samples, cue annotations and values`, () => {
      const { result, recording } = caseNamed(c.name)
      const samples = recording.data[0].length
      for (const [format, quantumUv] of [
        // EDF stores 16-bit integers (EDF spec, Kemp et al. 1992), BDF 24-bit: half a step of
        // the channel's range is the largest rounding error.
        ['edf', result.files.edf.maxChannelRangeUv / 65535],
        ['bdf', result.files.bdf.maxChannelRangeUv / 16777215],
      ] as const) {
        const f = result.files[format]
        expect(f.channelNames).toEqual(recording.channels)
        expect(f.sfreq).toBeCloseTo(c.options.rateHz, 9)
        // Data records are whole seconds; the last one is padded.
        expect(f.nTimes).toBeGreaterThanOrEqual(samples)
        expect(f.nTimes - samples).toBeLessThan(c.options.rateHz)
        expect(f.cuesFoundAsAnnotations).toBe(recording.cues.length)
        expect(f.maxAbsErrorUv).toBeLessThanOrEqual(quantumUv)
      }
      expect(result.files.csv.header.slice(1, 1 + recording.channels.length)).toEqual(recording.channels)
      expect(result.files.csv.rows).toBe(samples)
    })
  }
})

describe('decoding a simulated calibration run (CSP: Ramoser et al. 2000; LDA with shrinkage: Ledoit & Wolf 2004)', () => {
  const one = caseNamed('calibration-skill-1')
  const lapsing = caseNamed('calibration-skill-0.7')
  const wrongShare = 0.3 // DEFAULT_PARTICIPANT.wrongClassShare, used by both cases

  it('mne.decoding.CSP recovers the planted source patterns (|r| > 0.9)', () => {
    for (const r of Object.values(one.result.csp!.patternCorrelation)) expect(Math.abs(r)).toBeGreaterThan(0.9)
  })

  // The skill the participant actually showed in this run (a binomial draw around 0.7), and
  // the share of its lapses spent on the wrong class.
  const outcomes = lapsing.result.csp!.trialOutcomes
  const total = Object.values(outcomes).reduce((x, y) => x + y, 0)
  const realisedSkill = outcomes['as-cued'] / total
  const realisedWrongShare = (outcomes['wrong-class'] ?? 0) / Math.max(1, total - outcomes['as-cued'])
  // 120 trials: binomial standard error of an accuracy ≈ 0.04; allow two of them.
  const TOLERANCE = 0.08

  it('the participant lapses at the rate the skill sets (binomial, 3 standard errors)', () => {
    expect(Math.abs(realisedSkill - 0.7)).toBeLessThan(3 * Math.sqrt((0.7 * 0.3) / total))
    expect(Math.abs(realisedWrongShare - wrongShare)).toBeLessThan(3 * Math.sqrt((wrongShare * (1 - wrongShare)) / (total - outcomes['as-cued'])))
  })

  it('the accuracy scikit-learn measured at skill 0.7 is the one the skill implies', () => {
    const a = one.result.csp!.cvAccuracy
    expect(a).toBeGreaterThan(0.85) // a fully attentive good performer
    expect(Math.abs(lapsing.result.csp!.cvAccuracy - impliedAccuracy(realisedSkill, 2, realisedWrongShare, a))).toBeLessThanOrEqual(TOLERANCE)
  })

  it("the engine's trainDecoder reaches the implied accuracy and recovers the planted patterns", () => {
    const epoch: [number, number] = [0.5, 4.5]
    const good = trainDecoder(one.recording, { epoch, trainedAt: '2000-01-01T00:00:00Z' })
    const weak = trainDecoder(lapsing.recording, { epoch, trainedAt: '2000-01-01T00:00:00Z' })
    expect(good.cv.accuracy).toBeGreaterThan(0.85)
    expect(Math.abs(weak.cv.accuracy - impliedAccuracy(realisedSkill, 2, realisedWrongShare, good.cv.accuracy))).toBeLessThanOrEqual(TOLERANCE)
    // Haufe et al. (2014) patterns of the fitted filters: the best-matching one per class.
    for (const planted of Object.values(one.truth.classPatterns)) {
      const best = Math.max(...good.patterns.map((p) => Math.abs(correlation(p, planted))))
      expect(best).toBeGreaterThan(0.9)
    }
  })
})

function correlation(a: readonly number[], b: readonly number[]): number {
  const n = a.length
  const ma = a.reduce((s, v) => s + v, 0) / n
  const mb = b.reduce((s, v) => s + v, 0) / n
  let sab = 0
  let saa = 0
  let sbb = 0
  for (let i = 0; i < n; i++) {
    sab += (a[i] - ma) * (b[i] - mb)
    saa += (a[i] - ma) ** 2
    sbb += (b[i] - mb) ** 2
  }
  return sab / Math.sqrt(saa * sbb)
}
