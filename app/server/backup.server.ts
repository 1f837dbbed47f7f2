// Backup and restore of Tiller's database (docs/operations.md).
// PGlite: a gzip tarball of the whole data directory made by PGlite itself (dumpDataDir), with
// a manifest beside it (row counts per table, SHA-256 of the archive). PGlite has no lock
// between processes, so the server must be stopped first: a running server is recognised by
// the postmaster.pid file PGlite keeps in the directory while it is open.
// PostgreSQL: pg_dump's custom format and pg_restore, which read a consistent snapshot while
// the server runs.
import { createHash } from 'node:crypto'
import { spawnSync } from 'node:child_process'
import { existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs'
import { dirname, resolve } from 'node:path'
import { PGlite } from '@electric-sql/pglite'
import { sql } from 'drizzle-orm'
import { drizzle } from 'drizzle-orm/pglite'
import { migrate } from 'drizzle-orm/pglite/migrator'
import { migrationsFolder, openDatabase, type Database } from '~/db/client.server'
import * as schema from '~/db/schema'

export class BackupError extends Error {}

/** Tables whose row counts are recorded in a manifest and checked after a restore. */
export const COUNTED_TABLES = [
  'labs',
  'users',
  'participants',
  'montages',
  'protocols',
  'sessions',
  'runs',
  'trials',
  'decisions',
  'recording_chunks',
  'session_events',
  'decoders',
  'annotations',
  'audit_events',
] as const

export interface BackupManifest {
  format: 'tiller-pglite-backup-1'
  createdAt: string
  archiveBytes: number
  sha256: string
  rows: Record<string, number>
}

export async function rowCounts(db: Database): Promise<Record<string, number>> {
  const out: Record<string, number> = {}
  for (const table of COUNTED_TABLES) {
    const result = (await db.execute(sql.raw(`select count(*)::int as n from "${table}"`))) as unknown as { rows?: { n: number }[] } | { n: number }[]
    const rows = Array.isArray(result) ? result : (result.rows ?? [])
    out[table] = Number(rows[0]?.n ?? 0)
  }
  return out
}

export function manifestPathFor(archive: string): string {
  return `${archive}.manifest.json`
}

function sha256(bytes: Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex')
}

function assertNotInUse(dataDir: string, force: boolean) {
  if (!force && existsSync(resolve(dataDir, 'postmaster.pid'))) {
    throw new BackupError(
      `${dataDir} is in use (postmaster.pid is present): stop the Tiller server first (SIGTERM, or Ctrl-C). ` +
        'If no server is running (it was killed), pass --force: the database recovers its log when opened.',
    )
  }
}

/** Writes a gzip tarball of the PGlite data directory and its manifest. */
export async function backupPglite(dataDir: string, archive: string, options: { force?: boolean } = {}): Promise<BackupManifest> {
  const dir = resolve(dataDir)
  if (!existsSync(resolve(dir, 'PG_VERSION'))) throw new BackupError(`${dir} is not a Tiller data directory (no PG_VERSION)`)
  assertNotInUse(dir, options.force ?? false)
  const handle = await openDatabase(dir)
  let rows: Record<string, number>
  let bytes: Uint8Array
  try {
    rows = await rowCounts(handle.db)
    // The same PGlite instance the database handle opened; dumpDataDir checkpoints first.
    const client = (handle.db as unknown as { $client: PGlite }).$client
    bytes = new Uint8Array(await (await client.dumpDataDir('gzip')).arrayBuffer())
  } finally {
    await handle.close()
  }
  mkdirSync(dirname(resolve(archive)), { recursive: true })
  const partial = `${archive}.partial`
  writeFileSync(partial, bytes)
  renameSync(partial, archive) // a half-written archive never carries the final name
  const manifest: BackupManifest = { format: 'tiller-pglite-backup-1', createdAt: new Date().toISOString(), archiveBytes: bytes.byteLength, sha256: sha256(bytes), rows }
  writeFileSync(manifestPathFor(archive), JSON.stringify(manifest, null, 2) + '\n')
  return manifest
}

export interface RestoreResult {
  rows: Record<string, number>
  /** Where the directory that was there before now lives (with --force), or null. */
  previousMovedTo: string | null
}

/**
 * Restores an archive into dataDir. An existing, non-empty directory is only replaced with
 * `force`, and is then moved aside, not deleted. The archive's checksum and row counts are
 * checked against its manifest; on a mismatch the restored copy is removed and the previous
 * directory put back.
 */
export async function restorePglite(archive: string, dataDir: string, options: { force?: boolean } = {}): Promise<RestoreResult> {
  if (!existsSync(archive)) throw new BackupError(`no such archive: ${archive}`)
  const bytes = new Uint8Array(readFileSync(archive))
  const manifestPath = manifestPathFor(archive)
  const manifest = existsSync(manifestPath) ? (JSON.parse(readFileSync(manifestPath, 'utf8')) as BackupManifest) : null
  if (manifest && manifest.sha256 !== sha256(bytes)) throw new BackupError(`${archive} does not match its manifest (checksum differs): the file is damaged or was replaced`)

  const dir = resolve(dataDir)
  let previousMovedTo: string | null = null
  if (existsSync(dir) && readdirSync(dir).length > 0) {
    if (!options.force) throw new BackupError(`${dir} already holds a database. Pass --force to move it aside and restore in its place.`)
    assertNotInUse(dir, false)
    previousMovedTo = `${dir}.before-restore-${new Date().toISOString().replace(/[:.]/g, '-')}`
    renameSync(dir, previousMovedTo)
  }
  const putBack = () => {
    rmSync(dir, { recursive: true, force: true })
    if (previousMovedTo) renameSync(previousMovedTo, dir)
  }
  try {
    mkdirSync(dirname(dir), { recursive: true })
    const client = new PGlite(dir, { loadDataDir: new Blob([bytes]) })
    await client.waitReady
    try {
      const db = drizzle(client, { schema }) as unknown as Database
      await migrate(db as never, { migrationsFolder }) // a backup from an older release gets the newer migrations
      const rows = await rowCounts(db)
      if (manifest) {
        const differ = COUNTED_TABLES.filter((t) => manifest.rows[t] !== undefined && manifest.rows[t] !== rows[t])
        if (differ.length > 0) throw new BackupError(`restored row counts differ from the manifest for ${differ.map((t) => `${t} (${rows[t]} vs ${manifest.rows[t]})`).join(', ')}`)
      }
      return { rows, previousMovedTo }
    } finally {
      await client.close()
    }
  } catch (error) {
    putBack()
    throw error
  }
}

/** pg_dump / pg_restore from PATH or Debian's versioned directory. */
export function postgresTool(name: 'pg_dump' | 'pg_restore'): string | null {
  const onPath = spawnSync('sh', ['-c', `command -v ${name}`], { encoding: 'utf8' })
  if (onPath.status === 0 && onPath.stdout.trim()) return onPath.stdout.trim()
  const base = '/usr/lib/postgresql'
  if (!existsSync(base)) return null
  for (const version of readdirSync(base).sort().reverse()) {
    const path = `${base}/${version}/bin/${name}`
    if (existsSync(path)) return path
  }
  return null
}

export function backupPostgres(url: string, archive: string): void {
  const tool = postgresTool('pg_dump')
  if (!tool) throw new BackupError('pg_dump is not installed (Debian: apt-get install postgresql-client)')
  const r = spawnSync(tool, ['--format=custom', '--no-owner', `--file=${archive}`, url], { encoding: 'utf8' })
  if (r.status !== 0) throw new BackupError(`pg_dump failed: ${r.stderr.trim()}`)
}

export function restorePostgres(archive: string, url: string): void {
  const tool = postgresTool('pg_restore')
  if (!tool) throw new BackupError('pg_restore is not installed (Debian: apt-get install postgresql-client)')
  const r = spawnSync(tool, ['--clean', '--if-exists', '--no-owner', '--single-transaction', `--dbname=${url}`, archive], { encoding: 'utf8' })
  if (r.status !== 0) throw new BackupError(`pg_restore failed: ${r.stderr.trim()}`)
}
