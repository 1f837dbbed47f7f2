// `tiller backup <file>`: a copy of the database to restore with `tiller restore` (docs/operations.md).
import { parseArgs } from 'node:util'
import { BackupError, backupPglite, backupPostgres } from '~/server/backup.server'
import { loadConfig } from '~/server/config.server'
import { isPostgresUrl } from '~/db/client.server'

export const summary = 'copy the database to a file: `tiller backup <file> [--force]` (PGlite: stop the server first)'

const USAGE = `usage: tiller backup <file> [--force]
  PGlite (TILLER_DATA_DIR): writes a gzip tarball of the data directory and <file>.manifest.json
    with the row counts and checksum. Stop the server first; --force only if it was killed.
  PostgreSQL (DATABASE_URL): runs pg_dump --format=custom; the server may keep running.`

export async function run(args: string[]): Promise<number> {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { force: { type: 'boolean' }, help: { type: 'boolean' } } })
  if (values.help || positionals.length !== 1) {
    console.log(USAGE)
    return values.help ? 0 : 2
  }
  const [file] = positionals
  const config = loadConfig()
  try {
    if (isPostgresUrl(config.databaseLocation)) {
      backupPostgres(config.databaseLocation, file)
      console.log(`backup written: ${file} (pg_dump custom format; restore with tiller restore ${file})`)
      return 0
    }
    const manifest = await backupPglite(config.databaseLocation, file, { force: values.force })
    const rows = Object.entries(manifest.rows).map(([t, n]) => `${t} ${n}`).join(', ')
    console.log(`backup written: ${file} (${manifest.archiveBytes} bytes, sha256 ${manifest.sha256.slice(0, 16)}…)\nrows: ${rows}`)
    return 0
  } catch (error) {
    if (error instanceof BackupError) {
      console.error(`tiller backup: ${error.message}`)
      return 1
    }
    throw error
  }
}
