// Engine benchmark: per-block online decode time for 8/32/64/128 channels at 250/500/1000 Hz
// with blocks of 1, 16 and 32 samples, and CSP + shrinkage-LDA training with 5-fold CV on
// 64 channels × 200 trials × 2 s at 500 Hz; the same work by a numpy/scipy peer (decode) and
// an MNE + scikit-learn peer (training) in the same run. `--json` prints one JSON object.
// Usage: npm run bench [-- --json] [-- --quick]
import { spawnSync } from 'node:child_process'
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import type { Decoder } from '../app/engine/decoder'
import { trainDecoder } from '../app/engine/decoder'
import { seededNormal } from '../app/engine/linalg'
import { createOnlineDecoder } from '../app/engine/online'
import { simulateImagery } from '../app/engine/synthetic'

const PYTHON = '/usr/bin/python3'
const peersDir = fileURLToPath(new URL('./peers/', import.meta.url))
const json = process.argv.includes('--json')
const quick = process.argv.includes('--quick')
const log = (s: string) => (json ? process.stderr.write(s + '\n') : console.log(s))

const CHANNELS = [8, 32, 64, 128]
const RATES = [250, 500, 1000]
const BLOCKS = [1, 16, 32]
const COMPONENTS = 6
const BAND: [number, number] = [8, 30]
const ORDER = 4
const WINDOW_SECONDS = 2

function benchDecoder(channels: number, rateHz: number): Decoder {
  const normal = seededNormal(channels * 7 + rateHz)
  const filters = Array.from({ length: COMPONENTS }, () => Array.from({ length: channels }, () => normal()))
  return {
    version: 1,
    method: 'csp',
    channels: Array.from({ length: channels }, (_, i) => `E${i + 1}`),
    classes: ['left', 'right'],
    rateHz,
    band: BAND,
    filterOrder: ORDER,
    notchHz: null,
    windowSeconds: WINDOW_SECONDS,
    epoch: [0.5, 2.5],
    filters,
    patterns: filters,
    componentNames: filters.map((_, i) => `c${i}`),
    componentBands: filters.map(() => BAND),
    lda: { weights: [filters.map(() => normal())], bias: [0.1], classCount: 2, means: [], priors: [0.5, 0.5], shrinkage: [0, 0] },
    cv: { k: 5, trials: 0, accuracy: 0, kappa: 0, confusion: [], folds: [], chanceLevel: 0, itrBitsPerTrial: 0, itrBitsPerMinute: 0 },
    trainedAt: '2026-01-01T00:00:00.000Z',
    trialCount: 0,
    skippedTrials: 0,
  }
}

/** Blocks to time per configuration: about 0.25 s of decoding, between 300 and 20000 blocks. */
function blockCount(channels: number, block: number): number {
  const estimateUs = 0.05 * channels * block + 1
  return Math.max(300, Math.min(quick ? 2000 : 20000, Math.round((quick ? 0.05e6 : 0.25e6) / estimateUs)))
}

function percentile(sorted: Float64Array, q: number): number {
  const i = Math.min(sorted.length - 1, Math.max(0, Math.ceil(q * sorted.length) - 1))
  return sorted[i]
}

interface DecodeRow {
  channels: number
  rate: number
  block: number
  median_us: number
  p99_us: number
  realtime_factor: number
  heap_bytes_per_block: number
  peer_median_us: number | null
  peer_p99_us: number | null
  speedup_vs_peer: number | null
}

function benchDecode(): DecodeRow[] {
  const rows: DecodeRow[] = []
  for (const channels of CHANNELS) for (const rate of RATES) for (const block of BLOCKS) {
    const online = createOnlineDecoder(benchDecoder(channels, rate))
    const blocks = blockCount(channels, block)
    const normal = seededNormal(channels + rate + block)
    // A pool of distinct blocks, prepared before timing.
    const pool = Array.from({ length: 64 }, () => Float32Array.from({ length: block * channels }, () => 20 * normal()))
    for (let i = 0; i < 2000; i++) online.push(pool[i % 64], block) // warm-up (JIT, buffers)
    // Allocation check without timer calls (a timer call itself allocates its result).
    const heapBefore = process.memoryUsage().heapUsed
    let sink = 0
    for (let i = 0; i < 5000; i++) sink += online.push(pool[i & 63], block).output
    const heapBytesPerBlock = Math.max(0, Math.round((process.memoryUsage().heapUsed - heapBefore) / 5000))
    const times = new Float64Array(blocks)
    for (let i = 0; i < blocks; i++) {
      const t0 = performance.now()
      const out = online.push(pool[i & 63], block)
      const t1 = performance.now()
      sink += out.output
      times[i] = (t1 - t0) * 1000
    }
    if (!Number.isFinite(sink)) throw new Error('decoder produced a non-finite output')
    times.sort()
    const median = percentile(times, 0.5)
    rows.push({
      channels,
      rate,
      block,
      median_us: round(median, 3),
      p99_us: round(percentile(times, 0.99), 3),
      realtime_factor: round(((block / rate) * 1e6) / median, 1),
      heap_bytes_per_block: heapBytesPerBlock,
      peer_median_us: null,
      peer_p99_us: null,
      speedup_vs_peer: null,
    })
  }
  return rows
}

function round(v: number, digits: number): number {
  const f = 10 ** digits
  return Math.round(v * f) / f
}

function runPython(script: string, args: string[], input?: string): unknown {
  const r = spawnSync(PYTHON, [join(peersDir, script), ...args], {
    input,
    encoding: 'utf8',
    maxBuffer: 64 * 1024 * 1024,
    timeout: 150_000,
    env: { ...process.env, OMP_NUM_THREADS: '1', OPENBLAS_NUM_THREADS: '1', MKL_NUM_THREADS: '1' },
  })
  if (r.status !== 0) throw new Error(`${script} failed: ${r.error?.message ?? r.stderr.slice(-400)}`)
  return JSON.parse(r.stdout)
}

function decodePeer(rows: DecodeRow[]): void {
  const configs = rows.map((r) => ({ channels: r.channels, rate: r.rate, block: r.block, blocks: quick ? 300 : 1500 }))
  const peer = runPython('decode_peer.py', [], JSON.stringify({ configs, band: BAND, order: ORDER, components: COMPONENTS, windowSeconds: WINDOW_SECONDS })) as {
    channels: number; rate: number; block: number; median_us: number; p99_us: number
  }[]
  for (const p of peer) {
    const row = rows.find((r) => r.channels === p.channels && r.rate === p.rate && r.block === p.block)!
    row.peer_median_us = round(p.median_us, 3)
    row.peer_p99_us = round(p.p99_us, 3)
    row.speedup_vs_peer = round(p.median_us / row.median_us, 2)
  }
}

interface TrainResult {
  channels: number
  trials: number
  seconds_per_trial: number
  rate: number
  seconds: number
  cv_accuracy: number
  peer_seconds: number | null
  peer_cv_accuracy: number | null
  ratio_vs_peer: number | null
}

function benchTrain(): TrainResult {
  const rate = 500
  const sim = simulateImagery({ rows: 8, cols: 8, rateHz: rate, trialsPerClass: quick ? 40 : 100, trialSeconds: 3, seed: 3 })
  const rec = sim.recording
  const t0 = performance.now()
  const decoder = trainDecoder(rec, { method: 'csp', band: BAND, filterOrder: ORDER, epoch: [0.5, 2.5], folds: 5, pairs: 3, trainedAt: 'bench' })
  const seconds = (performance.now() - t0) / 1000
  const result: TrainResult = {
    channels: rec.channels.length,
    trials: decoder.trialCount,
    seconds_per_trial: 2,
    rate,
    seconds: round(seconds, 3),
    cv_accuracy: round(decoder.cv.accuracy, 4),
    peer_seconds: null,
    peer_cv_accuracy: null,
    ratio_vs_peer: null,
  }
  const dir = mkdtempSync(join(tmpdir(), 'tiller-bench-'))
  try {
    const n = rec.data[0].length
    const flat = new Float32Array(rec.channels.length * n)
    rec.data.forEach((d, c) => flat.set(d, c * n))
    writeFileSync(join(dir, 'data.f32'), new Uint8Array(flat.buffer))
    const job = {
      channels: rec.channels.length,
      samples: n,
      rateHz: rate,
      band: BAND,
      order: ORDER,
      epoch: [0.5, 2.5],
      cueSamples: rec.cues.map((c) => c.sample),
      labels: rec.cues.map((c) => decoder.classes.indexOf(c.label)),
    }
    writeFileSync(join(dir, 'job.json'), JSON.stringify(job))
    const peer = runPython('train_peer.py', [join(dir, 'data.f32'), join(dir, 'job.json')]) as { seconds: number; accuracy: number }
    result.peer_seconds = round(peer.seconds, 3)
    result.peer_cv_accuracy = round(peer.accuracy, 4)
    result.ratio_vs_peer = round(peer.seconds / seconds, 2)
  } finally {
    rmSync(dir, { recursive: true, force: true })
  }
  return result
}

function main(): void {
  const started = performance.now()
  log('decode: timing Tiller ...')
  const decode = benchDecode()
  log('decode: timing the numpy/scipy peer ...')
  try {
    decodePeer(decode)
  } catch (e) {
    log(`decode peer did not run: ${(e as Error).message}`)
  }
  log('train: CSP + shrinkage LDA, 5-fold CV, 64 channels × 200 trials × 2 s at 500 Hz ...')
  const train = benchTrain()
  const target = decode.find((r) => r.channels === 64 && r.rate === 500 && r.block === 16)!
  const summary = {
    decode_faster_than_peer_everywhere: decode.every((r) => r.speedup_vs_peer === null || r.speedup_vs_peer > 1),
    realtime_64ch_500hz_block16: target.realtime_factor,
    realtime_target_met: target.realtime_factor >= 1000,
    train_no_slower_than_peer: train.ratio_vs_peer === null ? null : train.ratio_vs_peer >= 1,
    bench_seconds: round((performance.now() - started) / 1000, 1),
    node: process.version,
  }
  if (json) {
    console.log(JSON.stringify({ decode, train, summary }))
    return
  }
  const head = 'channels  rate  block   median µs    p99 µs   × real time   peer median µs   speed-up   heap B/block'
  console.log('\nper-block decode (band-pass, W, sliding log-variance, LDA)\n' + head)
  for (const r of decode) {
    console.log(
      `${String(r.channels).padStart(8)} ${String(r.rate).padStart(5)} ${String(r.block).padStart(6)} ${r.median_us.toFixed(2).padStart(11)} ${r.p99_us.toFixed(2).padStart(9)} ${r.realtime_factor.toFixed(0).padStart(13)} ${(r.peer_median_us?.toFixed(2) ?? '—').padStart(16)} ${(r.speedup_vs_peer?.toFixed(1) ?? '—').padStart(9)}× ${String(r.heap_bytes_per_block).padStart(13)}`,
    )
  }
  console.log(
    `\ntraining (${train.channels} ch × ${train.trials} trials × ${train.seconds_per_trial} s at ${train.rate} Hz, CSP + shrinkage LDA, 5-fold CV + final fit)\n` +
      `  Tiller ${train.seconds.toFixed(2)} s (CV accuracy ${(100 * train.cv_accuracy).toFixed(1)} %)\n` +
      `  MNE + scikit-learn ${train.peer_seconds?.toFixed(2) ?? '—'} s (CV accuracy ${train.peer_cv_accuracy !== null ? (100 * train.peer_cv_accuracy).toFixed(1) : '—'} %)\n` +
      `  ratio peer / Tiller ${train.ratio_vs_peer?.toFixed(2) ?? '—'}`,
  )
  console.log(
    `\ntargets: decode faster than numpy/scipy peer at every size: ${summary.decode_faster_than_peer_everywhere ? 'yes' : 'NO'}; ` +
      `64 ch / 500 Hz / 16-sample blocks ${target.realtime_factor.toFixed(0)}× real time (target ≥ 1000×): ${summary.realtime_target_met ? 'yes' : 'NO'}; ` +
      `training no slower than peer: ${summary.train_no_slower_than_peer === null ? '—' : summary.train_no_slower_than_peer ? 'yes' : 'NO'}. ` +
      `(${summary.bench_seconds} s)`,
  )
}

main()
