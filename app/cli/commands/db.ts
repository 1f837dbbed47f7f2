import { openConfiguredDatabase } from '../db-open.ts'

export const summary = 'database tasks: `tiller db migrate` applies pending migrations'

export async function run(args: string[]): Promise<number> {
  if (args[0] !== 'migrate') {
    console.error('usage: tiller db migrate   (uses TILLER_DATA_DIR or DATABASE_URL)')
    return 2
  }
  const handle = await openConfiguredDatabase()
  await handle.close()
  console.log(`migrations applied (${handle.kind})`)
  return 0
}
