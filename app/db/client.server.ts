// Opens Tiller's database: embedded PGlite in a data directory (default), in memory for
// tests ('memory://'), or a PostgreSQL server when a postgres:// URL is given. All three
// run the same Drizzle schema and the same migrations from drizzle/.
import { mkdirSync } from 'node:fs'
import { dirname, resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import type { PGlite } from '@electric-sql/pglite'
import { openPgliteThread } from './pglite-thread.server.ts'
import type { PgDatabase, PgQueryResultHKT } from 'drizzle-orm/pg-core'
import { drizzle as drizzlePglite } from 'drizzle-orm/pglite'
import { migrate as migratePglite } from 'drizzle-orm/pglite/migrator'
import { drizzle as drizzlePg } from 'drizzle-orm/node-postgres'
import { migrate as migratePg } from 'drizzle-orm/node-postgres/migrator'
import pg from 'pg'
import * as schema from './schema.ts'

export type Schema = typeof schema
export type Database = PgDatabase<PgQueryResultHKT, Schema>

export interface DatabaseHandle {
  db: Database
  kind: 'pglite' | 'postgres'
  /** Applies every migration in drizzle/ that has not run yet. */
  migrate(): Promise<void>
  close(): Promise<void>
}

/** True for a PostgreSQL server URL (postgres:// or postgresql://), false for PGlite locations. */
export function isPostgresUrl(location: string): boolean {
  return /^postgres(ql)?:\/\//.test(location)
}

export const migrationsFolder = resolve(dirname(fileURLToPath(import.meta.url)), '../../drizzle')

/**
 * @param location 'memory://', a directory path for PGlite, or a postgres:// URL.
 */
export async function openDatabase(location: string): Promise<DatabaseHandle> {
  if (isPostgresUrl(location)) {
    const pool = new pg.Pool({ connectionString: location, max: 10 })
    const db = drizzlePg(pool, { schema }) as unknown as Database
    return {
      db,
      kind: 'postgres',
      migrate: () => migratePg(db as never, { migrationsFolder }),
      close: () => pool.end(),
    }
  }
  let dir: string | null = null
  if (location !== 'memory://' && location !== '') {
    dir = resolve(location)
    // PGlite creates only the last path segment itself.
    mkdirSync(dirname(dir), { recursive: true })
  }
  // PGlite runs queries synchronously in WebAssembly; on its own thread a heavy review query
  // cannot stall the ingest, the SSE streams or anything else on the main event loop.
  const client = await openPgliteThread(dir)
  const db = drizzlePglite(client as unknown as PGlite, { schema }) as unknown as Database
  return {
    db,
    kind: 'pglite',
    migrate: () => migratePglite(db as never, { migrationsFolder }),
    close: () => client.close(),
  }
}

export { schema }
