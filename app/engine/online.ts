// The live decoding path: causal band-pass per band -> W -> squared component values over a
// sliding window -> log band power -> LDA. Constant work per sample, no allocation per block
// once the buffers fit the block size, and deterministic (a replay through a fresh decoder gives
// identical numbers). The running window sums are recomputed from the ring buffer once per
// window length, which bounds rounding drift without changing the cost per sample.
import type { Decoder } from './decoder'
import { createFilterState, designDecoderFilter, packSos, sosFilterInto, type FilterState } from './filters'
import { ldaDecide, ldaScores, type LdaDecision } from './lda'
import { projectSquares } from './projection'

export interface OnlineOutput {
  /** true once a whole window of samples has been seen */
  ready: boolean
  /** two classes: signed LDA score (log-odds, > 0 means classes[1]); more: the winning score */
  output: number
  probability: number
  classIndex: number
  className: string
  /** log band power per component over the current window */
  bandPower: Float64Array
  /** this block band-passed in the decoder's main band, interleaved; a reused buffer */
  filtered: Float32Array
  /** non-finite input values in this block (NaN, ±Infinity), replaced by 0 so the filters survive */
  invalidValues: number
}

export interface OnlineDecoder {
  readonly decoder: Decoder
  readonly windowSamples: number
  push(samples: Float32Array, sampleCount: number): OnlineOutput
  reset(): void
}

interface BandBranch {
  packed: Float64Array
  state: FilterState
  /** component indices using this band */
  components: number[]
  /** their filters, row-major (components × channels), and their rows in the squares buffer */
  weights: Float64Array
  rows: Int32Array
}

// The loops of the hot path live in small module-level functions over typed-array arguments,
// so the JIT keeps every array and index in registers.

/** Copies the block, replacing NaN and ±Infinity by 0; returns how many it replaced. */
function sanitizeInto(samples: Float32Array, dst: Float64Array, values: number): number {
  let invalid = 0
  for (let i = 0; i < values; i++) {
    const v = samples[i]
    if (v - v === 0) dst[i] = v // v - v is 0 for finite v, NaN for NaN and ±Infinity
    else {
      dst[i] = 0
      invalid++
    }
  }
  return invalid
}

function copyInto(src: Float64Array, dst: Float64Array | Float32Array, values: number): void {
  for (let i = 0; i < values; i++) dst[i] = src[i]
}

/**
 * Adds each sample's squared component values to the ring buffer and running sums, sample by
 * sample (the same order for any block split); once per window length the sums are recomputed
 * from the ring, which bounds rounding drift. Returns the new ring position.
 */
function slideWindow(squares: Float64Array, stride: number, sampleCount: number, ring: Float64Array, sums: Float64Array, K: number, n: number, start: number): number {
  let position = start
  for (let s = 0; s < sampleCount; s++) {
    for (let k = 0; k < K; k++) {
      const sq = squares[k * stride + s]
      const slot = k * n + position
      sums[k] += sq - ring[slot]
      ring[slot] = sq
    }
    position++
    if (position === n) {
      position = 0
      for (let k = 0; k < K; k++) {
        let total = 0
        for (let i = k * n, end = i + n; i < end; i++) total += ring[i]
        sums[k] = total
      }
    }
  }
  return position
}

export function createOnlineDecoder(decoder: Decoder): OnlineDecoder {
  if (decoder.version !== 1) throw new Error(`decoder version ${decoder.version} is not supported`)
  const C = decoder.channels.length
  const K = decoder.filters.length
  if (K === 0) throw new Error('decoder has no spatial components')
  if (decoder.filters.some((w) => w.length !== C)) throw new Error('decoder filters do not match its channel count')
  const n = Math.round(decoder.windowSeconds * decoder.rateHz)
  if (n < 2) throw new Error('decoder window is shorter than two samples')

  // One filter branch per distinct band; the main band comes first (it feeds `filtered`).
  const bandKey = (b: [number, number]) => `${b[0]}-${b[1]}`
  const bands: [number, number][] = [decoder.band]
  for (const b of decoder.componentBands) if (!bands.some((x) => bandKey(x) === bandKey(b))) bands.push(b)
  const branches: BandBranch[] = bands.map((band) => {
    const sos = designDecoderFilter({ band, order: decoder.filterOrder, rateHz: decoder.rateHz, notchHz: decoder.notchHz })
    return { packed: packSos(sos), state: createFilterState(sos, C), components: [] as number[], weights: new Float64Array(0), rows: new Int32Array(0) }
  })
  decoder.componentBands.forEach((b, k) => branches[bands.findIndex((x) => bandKey(x) === bandKey(b))].components.push(k))
  for (const br of branches) {
    br.weights = new Float64Array(br.components.length * C)
    br.components.forEach((k, j) => br.weights.set(decoder.filters[k], j * C))
    br.rows = Int32Array.from(br.components)
  }

  const ring = new Float64Array(K * n)
  const sums = new Float64Array(K)
  const bandPower = new Float64Array(K)
  const scores = new Float64Array(decoder.lda.weights.length)
  const decision: LdaDecision = { classIndex: 0, output: 0, probability: 0 }
  let position = 0
  let seen = 0
  let capacity = 0
  let scratch: Float64Array[] = []
  let squares = new Float64Array(0)
  let filteredStore = new Float32Array(0)
  const views = new Map<number, Float32Array>()

  const result: OnlineOutput = {
    ready: false,
    output: 0,
    probability: 0,
    classIndex: 0,
    className: decoder.classes[0],
    bandPower,
    filtered: filteredStore,
    invalidValues: 0,
  }

  function ensureCapacity(sampleCount: number): void {
    if (sampleCount <= capacity) return
    capacity = Math.max(sampleCount, capacity * 2, 32)
    scratch = branches.map(() => new Float64Array(capacity * C))
    squares = new Float64Array(capacity * K)
    filteredStore = new Float32Array(capacity * C)
    views.clear()
  }

  function push(samples: Float32Array, sampleCount: number): OnlineOutput {
    if (!Number.isInteger(sampleCount) || sampleCount < 0) throw new Error(`sample count must be a non-negative integer, got ${sampleCount}`)
    if (samples.length < sampleCount * C) throw new Error(`block holds ${samples.length} values, need ${sampleCount}×${C}`)
    ensureCapacity(sampleCount)
    // One NaN would stay in an IIR filter's state for good; a dropped value becomes 0 instead.
    const values = sampleCount * C
    const first = scratch[0]
    result.invalidValues = sanitizeInto(samples, first, values)
    for (let b = 1; b < branches.length; b++) copyInto(first, scratch[b], values)
    for (let b = 0; b < branches.length; b++) sosFilterInto(branches[b].packed, scratch[b], scratch[b], sampleCount, branches[b].state)
    copyInto(first, filteredStore, values)
    // Squared component values of every sample in the block, then the window sums.
    for (let b = 0; b < branches.length; b++) {
      const br = branches[b]
      projectSquares(br.weights, br.components.length, C, scratch[b], sampleCount, squares, br.rows, capacity)
    }
    position = slideWindow(squares, capacity, sampleCount, ring, sums, K, n, position)
    seen += sampleCount

    result.ready = seen >= n
    for (let k = 0; k < K; k++) bandPower[k] = Math.log(Math.max(sums[k] / n, 1e-300))
    ldaDecide(decoder.lda, ldaScores(decoder.lda, bandPower, scores), decision)
    result.output = decision.output
    result.probability = decision.probability
    result.classIndex = decision.classIndex
    result.className = decoder.classes[decision.classIndex]
    let view = views.get(sampleCount)
    if (!view) {
      view = filteredStore.subarray(0, sampleCount * C)
      views.set(sampleCount, view)
    }
    result.filtered = view
    return result
  }

  function reset(): void {
    for (const b of branches) b.state.z.fill(0)
    ring.fill(0)
    sums.fill(0)
    bandPower.fill(0)
    position = 0
    seen = 0
    result.ready = false
  }

  return { decoder, windowSamples: n, push, reset }
}
