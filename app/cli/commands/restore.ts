// `tiller restore <file>`: puts a `tiller backup` file back (docs/operations.md).
import { parseArgs } from 'node:util'
import { BackupError, restorePglite, restorePostgres } from '~/server/backup.server'
import { loadConfig } from '~/server/config.server'
import { isPostgresUrl } from '~/db/client.server'

export const summary = 'restore a `tiller backup` file: `tiller restore <file> [--force]` (server stopped)'

const USAGE = `usage: tiller restore <file> [--force]
  PGlite (TILLER_DATA_DIR): unpacks the archive, applies newer migrations and checks the row
    counts and checksum against <file>.manifest.json. An existing data directory is kept: with
    --force it is moved aside to <dir>.before-restore-<time>, never deleted.
  PostgreSQL (DATABASE_URL): pg_restore --clean --if-exists --single-transaction.
  Stop the server first in both cases.`

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
      restorePostgres(file, config.databaseLocation)
      console.log(`restored ${file} into the PostgreSQL database`)
      return 0
    }
    const result = await restorePglite(file, config.databaseLocation, { force: values.force })
    if (result.previousMovedTo) console.log(`the previous data directory is now ${result.previousMovedTo}`)
    console.log(`restored ${file} into ${config.databaseLocation}\nrows: ${Object.entries(result.rows).map(([t, n]) => `${t} ${n}`).join(', ')}`)
    return 0
  } catch (error) {
    if (error instanceof BackupError) {
      console.error(`tiller restore: ${error.message}`)
      return 1
    }
    throw error
  }
}
