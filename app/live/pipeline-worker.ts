// A decoding worker: hosts the pipelines of many live sessions. Blocks of one session are
// processed in arrival order; an exception in one pipeline is reported for that session and
// never reaches the others.
import { parentPort } from 'node:worker_threads'
import type { FromWorker, ResultMessage, ToWorker } from './pipeline-messages.ts'
import { SessionPipeline } from './session-pipeline.ts'

const port = parentPort
if (!port) throw new Error('pipeline-worker must run in a worker thread')
const pipelines = new Map<string, SessionPipeline>()

function send(message: FromWorker): void {
  port!.postMessage(message)
}

function fail(sessionId: string, error: unknown): void {
  send({ t: 'error', sessionId, message: error instanceof Error ? error.message : String(error) })
}

port.on('message', (message: ToWorker) => {
  switch (message.t) {
    case 'blocks': {
      const results: ResultMessage[] = []
      for (const block of message.blocks) {
        const pipeline = pipelines.get(block.sessionId)
        if (!pipeline) continue
        const started = performance.now()
        let decision = null
        try {
          if (block.reset) pipeline.resetDecoder()
          decision = pipeline.push(block.firstSample, block.samples, block.sampleCount, block.decide)
        } catch (error) {
          fail(block.sessionId, error)
        }
        results.push({
          sessionId: block.sessionId,
          seq: block.seq,
          lastSample: block.firstSample + block.sampleCount - 1,
          receivedAt: block.receivedAt,
          decision,
          computeUs: Math.round((performance.now() - started) * 1000),
        })
      }
      if (results.length > 0) send({ t: 'results', results })
      return
    }
    case 'open': {
      try {
        const pipeline = new SessionPipeline(message.sessionId, message.channels, message.rateHz, message.displayBand, message.displayRateHz, message.settings)
        pipeline.setDecoder(message.decoder)
        pipelines.set(message.sessionId, pipeline)
      } catch (error) {
        fail(message.sessionId, error)
      }
      return
    }
    case 'decoder': {
      try {
        pipelines.get(message.sessionId)?.setDecoder(message.decoder)
      } catch (error) {
        fail(message.sessionId, error)
      }
      return
    }
    case 'settings':
      pipelines.get(message.sessionId)?.setSettings(message.settings)
      return
    case 'close':
      pipelines.delete(message.sessionId)
      return
    case 'display-tick':
      for (const pipeline of pipelines.values()) {
        const frame = pipeline.takeDisplay()
        if (frame) send(frame)
      }
      return
  }
})

send({ t: 'ready' })
