import { parseArgs } from 'node:util'
import { eq } from 'drizzle-orm'
import { z } from 'zod'
import { users } from '~/db/schema'
import { createApiToken, tokenNameSchema } from '~/server/api-tokens.server'
import { openConfiguredDatabase } from '../db-open.ts'

export const summary = 'API tokens: `tiller token create --email E --name N [--days D]` prints a bearer token for a developer'

const schema = z.object({
  email: z.string({ message: '--email is required' }).trim().toLowerCase().email('--email must be an e-mail address'),
  name: tokenNameSchema.or(z.undefined()).refine((v) => v !== undefined, '--name is required'),
  days: z.coerce.number().int('--days must be a whole number').min(1, '--days must be at least 1').max(3650, '--days must be at most 3650').optional(),
})

export async function run(args: string[]): Promise<number> {
  const [sub, ...rest] = args
  if (sub !== 'create') {
    console.error(`usage: ${summary.split('`')[1]}\n  --days D   expire after D days (default: no expiry)`)
    return sub === '--help' ? 0 : 2
  }
  const { values } = parseArgs({ args: rest, options: { email: { type: 'string' }, name: { type: 'string' }, days: { type: 'string' } } })
  const parsed = schema.safeParse(values)
  if (!parsed.success) {
    for (const issue of parsed.error.issues) console.error(`tiller token create: ${issue.message}`)
    return 2
  }
  const handle = await openConfiguredDatabase()
  try {
    const [user] = await handle.db.select().from(users).where(eq(users.email, parsed.data.email))
    if (!user) {
      console.error(`tiller token create: no account for ${parsed.data.email}`)
      return 1
    }
    if (!user.active || user.role !== 'developer') {
      console.error(`tiller token create: ${user.email} is ${user.active ? `a ${user.role}` : 'deactivated'}; API tokens are for active developers`)
      return 1
    }
    const { token, row } = await createApiToken(handle.db, user, { name: parsed.data.name as string, expiresDays: parsed.data.days ?? null }, 'cli')
    // The token goes to stdout alone so scripts can capture it; the notes go to stderr.
    console.error(`created API token "${row.name}" for ${user.email}${row.expiresAt ? `, expires ${row.expiresAt.toISOString().slice(0, 10)}` : ', no expiry'}. It is shown only this once.`)
    console.log(token)
    return 0
  } finally {
    await handle.close()
  }
}
