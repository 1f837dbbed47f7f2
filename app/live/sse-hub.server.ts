// Fan-out of one live stream (a session's operator or feedback stream) to its browsers.
// Each event is serialised once, kept in a ring for Last-Event-ID resume, and offered to every
// client's own bounded queue. A slow client only loses its own display frames (signal,
// band power, figures): publishing never waits and never grows without bound.

export interface HubEntry {
  seq: number
  id: string
  /** The encoded SSE frame: "id: ..\nevent: ..\ndata: ..\n\n". */
  frame: string
  droppable: boolean
}

export interface HubClient {
  /** Called with a batch when the client can take more; false means "closed". */
  offer(entry: HubEntry): void
  close(): void
}

export interface HubOptions {
  ringSize: number
  /** Upper bound of the ring's frames in bytes (UTF-16 length × 2), whatever their count. */
  ringBytes?: number
  clientQueue: number
}

/** Per process: ids from an earlier server process never match, so they get a fresh snapshot. */
const EPOCH = Date.now().toString(36)

export function sseFrame(id: string | null, event: string, data: string): string {
  // JSON.stringify never emits raw newlines, so one data line suffices.
  return `${id ? `id: ${id}\n` : ''}event: ${event}\ndata: ${data}\n\n`
}

export class SseHub {
  private ring: HubEntry[] = []
  private ringChars = 0
  private seq = 0
  private clients = new Set<HubClient>()
  published = 0

  constructor(private readonly options: HubOptions) {}

  get clientCount(): number {
    return this.clients.size
  }

  publish(event: string, payload: unknown, droppable = false): void {
    this.publishJson(event, JSON.stringify(payload), droppable)
  }

  /** Publishes a payload already serialised (by a worker) as JSON without newlines. */
  publishJson(event: string, json: string, droppable = false): void {
    const seq = ++this.seq
    const id = `${EPOCH}-${seq}`
    const entry: HubEntry = { seq, id, frame: sseFrame(id, event, json), droppable }
    this.ring.push(entry)
    this.ringChars += entry.frame.length
    const maxChars = (this.options.ringBytes ?? 4 * 2 ** 20) / 2
    let drop = 0
    while (this.ring.length - drop > this.options.ringSize || (this.ringChars > maxChars && this.ring.length - drop > 1)) {
      this.ringChars -= this.ring[drop].frame.length
      drop++
    }
    if (drop > 0) this.ring.splice(0, drop)
    this.published++
    for (const client of this.clients) client.offer(entry)
  }

  /**
   * Adds a client. Returns the entries it missed since `lastEventId` if they are all still in
   * the ring, or null if it must start from a fresh snapshot.
   */
  subscribe(client: HubClient, lastEventId: string | null): HubEntry[] | null {
    this.clients.add(client)
    if (!lastEventId) return null
    const [epoch, seqText] = lastEventId.split('-')
    const lastSeq = Number(seqText)
    if (epoch !== EPOCH || !Number.isInteger(lastSeq) || lastSeq > this.seq) return null
    const oldest = this.ring.length > 0 ? this.ring[0].seq : this.seq + 1
    if (lastSeq < oldest - 1) return null
    return this.ring.filter((e) => e.seq > lastSeq)
  }

  unsubscribe(client: HubClient): void {
    this.clients.delete(client)
  }

  closeAll(): void {
    for (const client of [...this.clients]) client.close()
    this.clients.clear()
  }
}
