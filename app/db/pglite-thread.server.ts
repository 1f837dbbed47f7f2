// PGlite on its own thread. The embedded database runs its queries synchronously inside
// WebAssembly, so on the main thread every query (a review page's aggregate, the decision
// log's batch) stalls everything else the server does, the live decision path included. This
// client has the part of PGlite's interface that drizzle-orm/pglite uses (query, transaction)
// and forwards it to a worker thread that owns the PGlite instance; the main thread only
// posts messages. Use it in place of `new PGlite(dir)` and pass it to drizzle as before.
import { Worker } from 'node:worker_threads'
import type { Results } from '@electric-sql/pglite'

interface Pending {
  resolve(value: unknown): void
  reject(error: unknown): void
}

interface QueryOptions {
  rowMode?: 'array' | 'object'
  parsers?: Record<number, (value: string, typeId: number) => unknown>
}

export interface PgliteThreadTransaction {
  query<T>(sql: string, params?: unknown[], options?: QueryOptions): Promise<Results<T>>
  exec(sql: string): Promise<Results[]>
  rollback(): Promise<void>
}

export class DatabaseThreadError extends Error {
  code?: string
  detail?: string
  constraint?: string
}

export class PgliteThread {
  private readonly worker: Worker
  private next = 1
  private nextTx = 1
  private pending = new Map<number, Pending>()
  private failed: Error | null = null
  readonly waitReady: Promise<void>

  constructor(dataDir: string | null) {
    this.worker = new Worker(new URL('./pglite-thread-worker.mjs', import.meta.url), { workerData: { dataDir }, name: 'tiller-database' })
    let ready!: Pending
    this.waitReady = new Promise<void>((resolve, reject) => (ready = { resolve: () => resolve(), reject }))
    this.pending.set(0, ready)
    this.worker.on('message', (m: { id: number; ok: boolean; result?: unknown; error?: Record<string, string> }) => {
      const p = this.pending.get(m.id)
      if (!p) return
      this.pending.delete(m.id)
      if (m.ok) p.resolve(m.result)
      else p.reject(Object.assign(new DatabaseThreadError(m.error?.message ?? 'database error'), m.error))
    })
    const fail = (error: Error) => {
      this.failed = error
      for (const p of this.pending.values()) p.reject(error)
      this.pending.clear()
    }
    this.worker.on('error', fail)
    this.worker.on('exit', (code) => fail(new Error(`the database thread stopped (exit ${code})`)))
  }

  private call<T>(message: Record<string, unknown>): Promise<T> {
    if (this.failed) return Promise.reject(this.failed)
    const id = this.next++
    return new Promise<T>((resolve, reject) => {
      this.pending.set(id, { resolve: resolve as (v: unknown) => void, reject })
      this.worker.postMessage({ ...message, id })
    })
  }

  private queryIn<T>(txId: number | null, sql: string, params: unknown[] = [], options: QueryOptions = {}): Promise<Results<T>> {
    // Parser functions cannot cross threads; drizzle only passes "keep as text" parsers, which
    // the worker applies by type id.
    const rawTypes = options.parsers ? Object.keys(options.parsers).map(Number) : []
    return this.call<Results<T>>({ op: 'query', sql, params, rowMode: options.rowMode ?? 'object', rawTypes, txId })
  }

  query<T>(sql: string, params?: unknown[], options?: QueryOptions): Promise<Results<T>> {
    return this.queryIn<T>(null, sql, params, options)
  }

  exec(sql: string): Promise<Results[]> {
    return this.call<Results[]>({ op: 'exec', sql, txId: null })
  }

  async transaction<T>(fn: (tx: PgliteThreadTransaction) => Promise<T>): Promise<T> {
    const txId = this.nextTx++
    await this.call({ op: 'begin', txId })
    let rolledBack = false
    const tx: PgliteThreadTransaction = {
      query: (sql, params, options) => this.queryIn(txId, sql, params, options),
      exec: (sql) => this.call<Results[]>({ op: 'exec', sql, txId }),
      rollback: async () => {
        rolledBack = true
        await this.call({ op: 'end', txId, commit: false })
      },
    }
    try {
      const result = await fn(tx)
      if (!rolledBack) await this.call({ op: 'end', txId, commit: true })
      return result
    } catch (error) {
      if (!rolledBack) await this.call({ op: 'end', txId, commit: false }).catch(() => undefined)
      throw error
    }
  }

  /** PGlite's dumpDataDir (a tarball of the data directory, for backups), made in the database thread. */
  async dumpDataDir(compression: 'auto' | 'gzip' | 'none' = 'auto'): Promise<File> {
    const { bytes, name, type } = await this.call<{ bytes: Uint8Array; name: string; type: string }>({ op: 'dump', compression })
    return new File([bytes as Uint8Array<ArrayBuffer>], name, { type })
  }

  async close(): Promise<void> {
    if (!this.failed) await this.call({ op: 'close' }).catch(() => undefined)
    await this.worker.terminate()
  }
}

export async function openPgliteThread(dataDir: string | null): Promise<PgliteThread> {
  const client = new PgliteThread(dataDir)
  await client.waitReady
  return client
}
