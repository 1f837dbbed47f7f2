// The embedded database's own thread: hosts the PGlite instance and answers queries posted by
// app/db/pglite-thread.server.ts. Plain JavaScript so it starts without a TypeScript loader.
import { parentPort, workerData } from 'node:worker_threads'
import { PGlite } from '@electric-sql/pglite'

const pg = workerData.dataDir ? new PGlite(workerData.dataDir) : new PGlite()
const transactions = new Map()

function errorInfo(error) {
  const out = { message: error?.message ?? String(error) }
  // Keep the PostgreSQL fields callers look at (code 23505 = unique violation, etc.).
  for (const key of ['code', 'detail', 'hint', 'constraint', 'table', 'column', 'schema', 'severity', 'position']) if (error && error[key] !== undefined) out[key] = error[key]
  return out
}

function parsersFor(rawTypes) {
  if (!rawTypes || rawTypes.length === 0) return undefined
  const parsers = {}
  for (const t of rawTypes) parsers[t] = (value) => value
  return parsers
}

async function handle(message) {
  switch (message.op) {
    case 'query': {
      const target = message.txId ? transactions.get(message.txId)?.tx : pg
      if (!target) throw new Error('the transaction has already ended')
      const result = await target.query(message.sql, message.params ?? [], { rowMode: message.rowMode, parsers: parsersFor(message.rawTypes) })
      return { rows: result.rows, fields: result.fields, affectedRows: result.affectedRows }
    }
    case 'exec': {
      const target = message.txId ? transactions.get(message.txId)?.tx : pg
      if (!target) throw new Error('the transaction has already ended')
      const results = await target.exec(message.sql)
      return results.map((r) => ({ rows: r.rows, fields: r.fields, affectedRows: r.affectedRows }))
    }
    case 'begin': {
      // PGlite runs one transaction at a time and queues other queries behind it, exactly as
      // it does in-process; the transaction stays open until the caller sends 'end'.
      let opened
      const ready = new Promise((resolve) => (opened = resolve))
      const entry = {}
      entry.settled = pg
        .transaction(async (tx) => {
          entry.tx = tx
          transactions.set(message.txId, entry)
          opened()
          const commit = await new Promise((resolve) => (entry.finish = resolve))
          if (!commit) await tx.rollback()
        })
        .finally(() => transactions.delete(message.txId))
      await Promise.race([ready, entry.settled])
      return null
    }
    case 'end': {
      const entry = transactions.get(message.txId)
      if (!entry) return null
      entry.finish(message.commit)
      await entry.settled.catch((error) => {
        if (message.commit) throw error
      })
      return null
    }
    case 'dump': {
      const file = await pg.dumpDataDir(message.compression)
      return { bytes: new Uint8Array(await file.arrayBuffer()), name: file.name, type: file.type }
    }
    case 'close':
      await pg.close()
      return null
    default:
      throw new Error(`unknown database operation ${message.op}`)
  }
}

parentPort.on('message', (message) => {
  handle(message).then(
    (result) => parentPort.postMessage({ id: message.id, ok: true, result }),
    (error) => parentPort.postMessage({ id: message.id, ok: false, error: errorInfo(error) }),
  )
})

pg.waitReady.then(
  () => parentPort.postMessage({ id: 0, ok: true, result: 'ready' }),
  (error) => parentPort.postMessage({ id: 0, ok: false, error: errorInfo(error) }),
)
