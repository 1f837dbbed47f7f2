// A text/event-stream Response for a hub, with real back-pressure. remix-utils' eventStream
// enqueues every event into the response stream whether or not the socket keeps up, so a
// stalled browser would grow server memory without bound; here the stream pulls from a
// bounded per-client queue instead. The wire format is plain SSE, so the browser side uses
// EventSource or remix-utils/sse/react's useEventSource unchanged.
import { sseFrame, type HubClient, type HubEntry, type SseHub } from './sse-hub.server.ts'

export interface StreamOptions {
  hub: SseHub
  signal: AbortSignal
  lastEventId: string | null
  /** Events to send first when the client cannot resume (the current state). */
  snapshot: () => { event: string; payload: unknown }[]
  clientQueue: number
  heartbeatMs?: number
  /** Called with the time each frame is handed to the response stream (for latency figures). */
  onWritten?: (entry: HubEntry, atMs: number) => void
}

const encoder = new TextEncoder()

export function hubEventStream(options: StreamOptions): Response {
  const queue: (HubEntry | string)[] = []
  let dropped = 0
  let closed = false
  let waiting: ReadableStreamDefaultController<Uint8Array> | null = null
  let heartbeat: NodeJS.Timeout | null = null

  const drainInto = (controller: ReadableStreamDefaultController<Uint8Array>) => {
    let text = ''
    if (dropped > 0) {
      text += sseFrame(null, 'lag', JSON.stringify({ dropped }))
      dropped = 0
    }
    const written: HubEntry[] = []
    for (const item of queue) {
      if (typeof item === 'string') text += item
      else {
        text += item.frame
        written.push(item)
      }
    }
    queue.length = 0
    controller.enqueue(encoder.encode(text))
    if (options.onWritten) {
      const now = performance.now()
      for (const e of written) if (e.seq > 0) options.onWritten(e, now)
    }
  }

  const client: HubClient = {
    offer(entry) {
      if (closed) return
      queue.push(entry)
      if (queue.length > options.clientQueue) {
        const at = queue.findIndex((e) => typeof e !== 'string' && e.droppable)
        if (at >= 0) {
          queue.splice(at, 1)
          dropped++
        } else {
          // Only essential events are queued and the client still cannot keep up: end the
          // stream; the browser reconnects with Last-Event-ID and resumes from the ring.
          client.close()
          return
        }
      }
      if (waiting) {
        const controller = waiting
        waiting = null
        drainInto(controller)
      }
    },
    close() {
      if (closed) return
      closed = true
      options.hub.unsubscribe(client)
      if (heartbeat) clearInterval(heartbeat)
      try {
        streamController?.close()
      } catch {
        // already closed by the consumer
      }
    },
  }

  let streamController: ReadableStreamDefaultController<Uint8Array> | null = null
  const stream = new ReadableStream<Uint8Array>(
    {
      start(controller) {
        streamController = controller
        const missed = options.hub.subscribe(client, options.lastEventId)
        if (missed === null) {
          for (const { event, payload } of options.snapshot()) queue.push(sseFrame(null, event, JSON.stringify(payload)))
        } else queue.push(...missed)
        // Tell EventSource to retry quickly after a drop.
        queue.unshift('retry: 1000\n\n')
        heartbeat = setInterval(() => client.offer({ seq: 0, id: '', frame: ': keep-alive\n\n', droppable: true }), options.heartbeatMs ?? 15_000)
        heartbeat.unref()
        options.signal.addEventListener('abort', () => client.close())
        if (options.signal.aborted) client.close()
      },
      pull(controller) {
        if (closed) return
        if (queue.length > 0 || dropped > 0) drainInto(controller)
        else waiting = controller
      },
      cancel() {
        client.close()
      },
    },
    { highWaterMark: 1 },
  )
  return new Response(stream, {
    headers: {
      'Content-Type': 'text/event-stream; charset=utf-8',
      'Cache-Control': 'no-cache, no-transform',
      Connection: 'keep-alive',
      'X-Accel-Buffering': 'no',
    },
  })
}
