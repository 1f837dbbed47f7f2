// A training job in its own worker thread: compares the spatial methods on the recording, then
// fits the chosen (or best) one. Runs beside the decoding workers, never on the main thread.
import { parentPort, workerData } from 'node:worker_threads'
import { compareMethods, trainDecoder, type TrainOptions } from '../engine/decoder.ts'
import type { Recording } from '../engine/recording.ts'
import type { SpatialMethodName } from '../engine/spatial/types.ts'

interface Job {
  recording: Recording
  options: TrainOptions
  method: SpatialMethodName | null
  methods: SpatialMethodName[] | null
}

const job = workerData.job as Job
try {
  const comparison = compareMethods(job.recording, { ...job.options, methods: job.methods ?? undefined })
  let method = job.method
  if (!method) {
    const ranked = comparison.filter((r) => r.accuracy !== null).sort((a, b) => (b.accuracy ?? 0) - (a.accuracy ?? 0))
    if (ranked.length === 0) throw new Error(`no method could be trained: ${comparison.map((r) => `${r.method}: ${r.error}`).join('; ')}`)
    method = ranked[0].method
  }
  const decoder = trainDecoder(job.recording, { ...job.options, method })
  parentPort!.postMessage({ ok: true, decoder, comparison })
} catch (error) {
  parentPort!.postMessage({ ok: false, error: error instanceof Error ? error.message : String(error) })
}
