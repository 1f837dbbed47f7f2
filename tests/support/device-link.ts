// A device link for tests and soak runs: connects to /ingest, says hello, collects the
// server's messages (welcome, run, ack, error), and streams paced blocks like an amplifier
// bridge would. Imports by relative path only, so scripts can use it too.
import WebSocket from 'ws'
import { encodeBlock, PROTOCOL_VERSION } from '../../app/ingest/protocol.ts'

export const RATE_HZ = 500
export const BLOCK = 16

export interface DeviceLink {
  ws: WebSocket
  messages: { type: string; [k: string]: unknown }[]
  /** Resolves with the close code and reason. */
  closed: Promise<{ code: number; reason: string }>
  isOpen(): boolean
  hello(fields?: Record<string, unknown>): void
  /** Resolves on the welcome, or rejects with the close. */
  welcome(timeoutMs?: number): Promise<{ runId: string | null; nextSample: number }>
}

export interface ConnectOptions {
  /** Keep every server message in `messages` (default true; long soak runs turn it off). */
  keepMessages?: boolean
  onMessage?: (message: { type: string; [k: string]: unknown }) => void
}

export function connect(url: string, options: ConnectOptions = {}): Promise<DeviceLink> {
  const keep = options.keepMessages ?? true
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url)
    const messages: DeviceLink['messages'] = []
    let open = false
    const closed = new Promise<{ code: number; reason: string }>((r) => ws.once('close', (code, reason) => r({ code, reason: reason.toString() })))
    ws.on('message', (data, isBinary) => {
      if (isBinary) return
      const message = JSON.parse(data.toString())
      if (keep || message.type === 'welcome' || message.type === 'error') messages.push(message)
      options.onMessage?.(message)
    })
    ws.on('error', () => undefined)
    ws.once('open', () => {
      open = true
      resolve(link)
    })
    ws.once('close', () => {
      open = false
    })
    ws.once('unexpected-response', () => reject(new Error('upgrade refused')))
    const link: DeviceLink = {
      ws,
      messages,
      closed,
      isOpen: () => open && ws.readyState === WebSocket.OPEN,
      hello(fields = {}) {
        ws.send(JSON.stringify({ type: 'hello', protocol: PROTOCOL_VERSION, device: 'test device', units: 'uV', rateHz: RATE_HZ, ...fields }))
      },
      welcome(timeoutMs = 5_000) {
        return new Promise((res, rej) => {
          const timer = setTimeout(() => rej(new Error('no welcome in time')), timeoutMs)
          const check = () => {
            const w = messages.find((m) => m.type === 'welcome')
            if (w) {
              clearTimeout(timer)
              ws.off('message', check)
              res({ runId: (w.runId as string | null) ?? null, nextSample: Number(w.nextSample) })
            }
          }
          ws.on('message', check)
          check()
          void closed.then((c) => {
            clearTimeout(timer)
            rej(new Error(`closed ${c.code} ${c.reason}`))
          })
        })
      },
    }
  })
}

/** A block of plausible EEG-like values (tens of microvolts). */
export function block(seq: number, firstSample: number, channels: number, samples = BLOCK, value?: (s: number, c: number) => number): Uint8Array {
  const data = new Float32Array(channels * samples)
  for (let s = 0; s < samples; s++)
    for (let c = 0; c < channels; c++) data[s * channels + c] = value ? value(s, c) : 20 * Math.sin(2 * Math.PI * 10 * ((firstSample + s) / RATE_HZ) + c) + 5 * Math.sin(0.37 * (firstSample + s) * (c + 1))
  return encodeBlock({ seq, firstSample, channelCount: channels, samples: data })
}

/** Streams blocks as the wall clock makes them due, until stop(). */
export function pacedStream(link: DeviceLink, channels: number, startSample = 0, rateHz = RATE_HZ) {
  let seq = 0
  let sample = startSample
  const started = performance.now()
  const timer = setInterval(() => {
    const due = startSample + Math.floor(((performance.now() - started) / 1000) * rateHz)
    while (sample + BLOCK <= due && link.isOpen()) {
      link.ws.send(block(seq++, sample, channels))
      sample += BLOCK
    }
  }, 8)
  return {
    get sent() {
      return seq
    },
    stop() {
      clearInterval(timer)
    },
  }
}
