// A simulated motor-imagery recording with planted sources, for checks and the benchmark (not
// for the demo, which has its own simulator). Two focal mu/beta sources sit over the left and
// right sensorimotor areas; imagining one hand lowers the power of the opposite source
// (event-related desynchronisation, Pfurtscheller & Lopes da Silva 1999). A broad background
// rhythm that changes strength from trial to trial reaches every electrode (volume conduction),
// which is what re-referencing and Laplacians are meant to remove (McFarland et al. 1997).
import { designBandpass, packSos, sosFilterChannel } from './filters'
import { seededNormal, seededRandom } from './linalg'
import type { Recording } from './recording'
import type { ChannelPosition } from './spatial/types'

export interface SyntheticOptions {
  /** electrodes on a rows × cols grid over the upper half of a unit sphere */
  rows?: number
  cols?: number
  rateHz?: number
  trialsPerClass?: number
  /** cue-to-cue interval */
  trialSeconds?: number
  /** fraction of source amplitude lost during imagery (0.5 = half the amplitude) */
  erdDepth?: number
  /** amplitude (µV) of the focal sources */
  sourceUv?: number
  /** amplitude (µV) of the broad background rhythm */
  commonUv?: number
  /** amplitude (µV) of independent sensor noise */
  sensorUv?: number
  /** two classes (left/right hand) or three (plus feet: a midline source) */
  classes?: string[]
  seed?: number
}

export interface SyntheticRecording {
  recording: Recording
  positions: ChannelPosition[]
  /** planted forward patterns (one value per channel) of the left and right sources */
  sourcePatterns: { left: number[]; right: number[]; midline: number[] }
}

function bandNoise(normal: () => number, n: number, band: [number, number], rateHz: number): Float64Array {
  const white = new Float64Array(n)
  for (let i = 0; i < n; i++) white[i] = normal()
  const y = sosFilterChannel(packSos(designBandpass({ lowHz: band[0], highHz: band[1], order: 2, rateHz })), white)
  let rms = 0
  for (let i = 0; i < n; i++) rms += y[i] * y[i]
  rms = Math.sqrt(rms / n) || 1
  for (let i = 0; i < n; i++) y[i] /= rms
  return y
}

export function simulateImagery(options: SyntheticOptions = {}): SyntheticRecording {
  const rows = options.rows ?? 4
  const cols = options.cols ?? 4
  const rateHz = options.rateHz ?? 250
  const perClass = options.trialsPerClass ?? 40
  const trialSeconds = options.trialSeconds ?? 4
  const erd = options.erdDepth ?? 0.5
  const sourceUv = options.sourceUv ?? 10
  const commonUv = options.commonUv ?? 15
  const sensorUv = options.sensorUv ?? 3
  const classes = options.classes ?? ['left', 'right']
  if (classes.length < 2 || classes.length > 3) throw new Error('the simulation has two or three classes')
  const normal = seededNormal(options.seed ?? 1)
  const uniform = seededRandom((options.seed ?? 1) + 7919)

  const positions: ChannelPosition[] = []
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      // latitude from 25° to 75° above the equator, longitude across -60°..60°
      const lat = ((25 + (50 * r) / Math.max(1, rows - 1)) * Math.PI) / 180
      const lon = ((-60 + (120 * c) / Math.max(1, cols - 1)) * Math.PI) / 180
      positions.push({ name: `E${r * cols + c + 1}`, x: Math.cos(lat) * Math.sin(lon), y: Math.cos(lat) * Math.cos(lon), z: Math.sin(lat) })
    }
  }
  const C = positions.length
  const blob = (lonDeg: number, latDeg: number, widthRad: number) => {
    const lat = (latDeg * Math.PI) / 180
    const lon = (lonDeg * Math.PI) / 180
    const cx = [Math.cos(lat) * Math.sin(lon), Math.cos(lat) * Math.cos(lon), Math.sin(lat)]
    return positions.map((p) => Math.exp(-((p.x - cx[0]) ** 2 + (p.y - cx[1]) ** 2 + (p.z - cx[2]) ** 2) / (2 * widthRad ** 2)))
  }
  const left = blob(-35, 50, 0.22)
  const right = blob(35, 50, 0.22)
  const midline = blob(0, 80, 0.22)
  const broad = positions.map(() => 0.8 + 0.4 * Math.abs(normal()) * 0.5)

  const trialCount = classes.length * perClass
  const step = Math.round(trialSeconds * rateHz)
  const lead = Math.round(2 * rateHz)
  const total = lead + trialCount * step + lead
  // Balanced, shuffled cue order (Fisher-Yates with the seeded generator).
  const labels = Array.from({ length: trialCount }, (_, i) => classes[i % classes.length])
  for (let i = labels.length - 1; i > 0; i--) {
    const j = Math.floor(uniform() * (i + 1))
    ;[labels[i], labels[j]] = [labels[j], labels[i]]
  }
  const cues = labels.map((label, i) => ({ sample: lead + i * step, label }))

  const srcLeft = bandNoise(normal, total, [9, 13], rateHz)
  const srcRight = bandNoise(normal, total, [9, 13], rateHz)
  const srcMid = bandNoise(normal, total, [9, 13], rateHz)
  const common = bandNoise(normal, total, [8, 14], rateHz)
  // Amplitude envelopes: ERD during imagery (0.5 s to 3 s after the cue), opposite hemisphere.
  const envLeft = new Float64Array(total).fill(1)
  const envRight = new Float64Array(total).fill(1)
  const envMid = new Float64Array(total).fill(1)
  const envCommon = new Float64Array(total).fill(1)
  for (const cue of cues) {
    const from = cue.sample + Math.round(0.5 * rateHz)
    const to = Math.min(total, cue.sample + Math.round(3 * rateHz))
    // first class: the right source desynchronises; second: the left; third: the midline
    const target = [envRight, envLeft, envMid][classes.indexOf(cue.label)]
    for (let i = from; i < to; i++) target[i] = 1 - erd
    const gain = Math.exp(0.6 * normal())
    for (let i = cue.sample; i < Math.min(total, cue.sample + step); i++) envCommon[i] = gain
  }
  const data = positions.map(() => new Float32Array(total))
  for (let t = 0; t < total; t++) {
    const l = sourceUv * envLeft[t] * srcLeft[t]
    const r = sourceUv * envRight[t] * srcRight[t]
    const m = classes.length > 2 ? sourceUv * envMid[t] * srcMid[t] : 0
    const g = commonUv * envCommon[t] * common[t]
    for (let c = 0; c < C; c++) data[c][t] = left[c] * l + right[c] * r + midline[c] * m + broad[c] * g + sensorUv * normal()
  }
  return {
    recording: { channels: positions.map((p) => p.name), rateHz, data, cues, annotations: [] },
    positions,
    sourcePatterns: { left, right, midline },
  }
}
