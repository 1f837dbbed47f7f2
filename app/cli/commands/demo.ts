import { DEMO_ACCOUNTS, DEMO_LAB, seedDemo } from '~/server/demo.server'
import { seedReviewSession } from '~/server/demo-sessions.server'
import { openConfiguredDatabase } from '../db-open.ts'

export const summary = 'seed the invented demo lab (once) and print its sign-in accounts'

export async function run(args: string[]): Promise<number> {
  if (args.includes('--help')) {
    console.log('usage: tiller demo [--no-sessions]   seeds the demo lab (and two finished simulated sessions) into TILLER_DATA_DIR / DATABASE_URL if it is not there yet')
    return 0
  }
  const handle = await openConfiguredDatabase()
  try {
    const { created, labId } = await seedDemo(handle.db)
    console.log(created ? `Seeded ${DEMO_LAB}.` : `${DEMO_LAB} is already there.`)
    if (created && !args.includes('--no-sessions')) {
      // Two finished sessions of a simulated participant, so review, replay and progress have
      // something to show on first start.
      await seedReviewSession(handle.db, labId, { seed: 21, trialsPerClass: 15, erdDepth: 0.4, startedAt: new Date('2026-11-03T09:00:00Z') })
      await seedReviewSession(handle.db, labId, { seed: 22, trialsPerClass: 15, erdDepth: 0.5, startedAt: new Date('2026-11-10T09:00:00Z') })
      console.log('Added two finished demo sessions of participant HS-014 (simulated signals).')
    }
    console.log('\nDemo sign-in accounts (invented people; for the demo only):')
    for (const a of DEMO_ACCOUNTS) console.log(`  ${a.role.padEnd(11)} ${a.email.padEnd(34)} ${a.password}`)
    return 0
  } finally {
    await handle.close()
  }
}
