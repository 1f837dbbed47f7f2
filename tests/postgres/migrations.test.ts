// The same Drizzle migrations and queries on a PostgreSQL server as on PGlite: the path a lab
// takes when it sets DATABASE_URL.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { eq, sql } from 'drizzle-orm'
import { participants, users } from '~/db/schema'
import { DEMO_ACCOUNTS } from '~/server/demo.server'
import { verifyPassword } from '~/server/passwords.server'
import { createTestServices, type TestServices } from '../support/services'

const url = process.env.TILLER_TEST_DATABASE_URL
let t: TestServices

beforeAll(async () => {
  if (!url) throw new Error('TILLER_TEST_DATABASE_URL is not set: run through scripts/with-postgres.sh')
  t = await createTestServices(url)
})
afterAll(async () => t?.close())

describe('PostgreSQL server', () => {
  it('runs every migration and reports a server, not PGlite', async () => {
    expect(t.handle.kind).toBe('postgres')
    const rows = await t.handle.db.execute(sql`select count(*)::int as n from drizzle.__drizzle_migrations`)
    const n = (rows as unknown as { rows: { n: number }[] }).rows[0].n
    expect(n).toBeGreaterThan(0)
  })

  it('migrating twice is a no-op', async () => {
    await t.handle.migrate()
  })

  it('holds the seeded demo lab with hashed passwords', async () => {
    const [row] = await t.handle.db.select().from(users).where(eq(users.email, DEMO_ACCOUNTS[0].email))
    expect(await verifyPassword(DEMO_ACCOUNTS[0].password, row.passwordHash)).toBe(true)
    const ps = await t.handle.db.select().from(participants).where(eq(participants.labId, t.labId))
    expect(ps.map((p) => p.code).sort()).toEqual(['HS-014', 'HS-022'])
  })

  it('enforces the same unique constraints', async () => {
    await expect(t.handle.db.insert(participants).values({ labId: t.labId, code: 'HS-014' })).rejects.toThrow()
  })
})
