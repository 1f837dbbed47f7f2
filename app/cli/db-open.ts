// Opens the database the same way server.ts does, for command-line use.
import { openDatabase, type DatabaseHandle } from '~/db/client.server'
import { loadConfig } from '~/server/config.server'

export async function openConfiguredDatabase(): Promise<DatabaseHandle> {
  const config = loadConfig()
  const handle = await openDatabase(config.databaseLocation)
  await handle.migrate()
  return handle
}
