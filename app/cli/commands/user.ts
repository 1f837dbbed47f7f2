import { parseArgs } from 'node:util'
import { eq } from 'drizzle-orm'
import { z } from 'zod'
import { labs } from '~/db/schema'
import { createUser } from '~/server/people.server'
import { openConfiguredDatabase } from '../db-open.ts'

export const summary = 'accounts: `tiller user create --email E --name N --role R --password P [--lab NAME]`'

const schema = z.object({
  email: z.string().email('--email must be an e-mail address'),
  name: z.string().min(1, '--name is required'),
  role: z.enum(['supervisor', 'operator', 'participant', 'developer'], { message: '--role must be supervisor, operator, participant or developer' }),
  password: z.string().min(10, '--password must be at least 10 characters'),
  lab: z.string().optional(),
})

export async function run(args: string[]): Promise<number> {
  const [sub, ...rest] = args
  if (sub !== 'create') {
    console.error(`usage: ${summary.split('`')[1]}`)
    return 2
  }
  const { values } = parseArgs({ args: rest, options: { email: { type: 'string' }, name: { type: 'string' }, role: { type: 'string' }, password: { type: 'string' }, lab: { type: 'string' } } })
  const parsed = schema.safeParse(values)
  if (!parsed.success) {
    for (const issue of parsed.error.issues) console.error(`tiller user create: ${issue.message}`)
    return 2
  }
  const handle = await openConfiguredDatabase()
  try {
    const labName = parsed.data.lab ?? 'My lab'
    let [lab] = await handle.db.select().from(labs).where(eq(labs.name, labName))
    if (!lab) [lab] = await handle.db.insert(labs).values({ name: labName }).returning()
    const user = await createUser(handle.db, { ...parsed.data, labId: lab.id })
    console.log(`created ${user.role} ${user.email} in lab "${lab.name}"`)
    return 0
  } finally {
    await handle.close()
  }
}
