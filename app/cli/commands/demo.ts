import { DEMO_ACCOUNTS, DEMO_LAB, seedDemo } from '~/server/demo.server'
import { openConfiguredDatabase } from '../db-open.ts'

export const summary = 'seed the invented demo lab (once) and print its sign-in accounts'

export async function run(args: string[]): Promise<number> {
  if (args.includes('--help')) {
    console.log('usage: tiller demo   seeds the demo lab into TILLER_DATA_DIR / DATABASE_URL if it is not there yet')
    return 0
  }
  const handle = await openConfiguredDatabase()
  try {
    const { created } = await seedDemo(handle.db)
    console.log(created ? `Seeded ${DEMO_LAB}.` : `${DEMO_LAB} is already there.`)
    console.log('\nDemo sign-in accounts (invented people; for the demo only):')
    for (const a of DEMO_ACCOUNTS) console.log(`  ${a.role.padEnd(11)} ${a.email.padEnd(34)} ${a.password}`)
    return 0
  } finally {
    await handle.close()
  }
}
