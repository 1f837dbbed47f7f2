// PGlite on its own thread (app/db/pglite-thread.server.ts): drizzle works unchanged on it,
// transactions commit and roll back, PostgreSQL error codes survive, and, the reason it
// exists, a long query no longer stalls the main thread's event loop.
import { eq, sql } from 'drizzle-orm'
import { drizzle } from 'drizzle-orm/pglite'
import { migrate } from 'drizzle-orm/pglite/migrator'
import { afterAll, beforeAll, expect, test } from 'vitest'
import { migrationsFolder } from '~/db/client.server'
import { openPgliteThread, type PgliteThread } from '~/db/pglite-thread.server'
import * as schema from '~/db/schema'

let client: PgliteThread
let db: ReturnType<typeof drizzle<typeof schema>>

beforeAll(async () => {
  client = await openPgliteThread(null)
  db = drizzle(client as never, { schema })
  await migrate(db, { migrationsFolder })
})
afterAll(async () => {
  await client?.close()
})

test('drizzle queries, returning rows with dates and json', async () => {
  const [lab] = await db.insert(schema.labs).values({ name: 'Thread lab' }).returning()
  expect(lab.createdAt).toBeInstanceOf(Date)
  const [m] = await db.insert(schema.montages).values({ labId: lab.id, name: 'm', channels: [{ name: 'C3', x: 1, y: 0, z: 0 }] }).returning()
  const [read] = await db.select().from(schema.montages).where(eq(schema.montages.id, m.id))
  expect(read.channels).toEqual([{ name: 'C3', x: 1, y: 0, z: 0 }])
})

test('a transaction that throws is rolled back; one that returns is committed', async () => {
  await expect(
    db.transaction(async (tx) => {
      await tx.insert(schema.labs).values({ name: 'rolled back' })
      throw new Error('boom')
    }),
  ).rejects.toThrow('boom')
  await db.transaction(async (tx) => {
    await tx.insert(schema.labs).values({ name: 'committed' })
  })
  const names = (await db.select().from(schema.labs)).map((l) => l.name)
  expect(names).toContain('committed')
  expect(names).not.toContain('rolled back')
})

test('PostgreSQL error codes reach the caller (23505 unique violation, SQLSTATE table in the PostgreSQL manual)', async () => {
  const [lab] = await db.insert(schema.labs).values({ name: 'codes' }).returning()
  await db.insert(schema.users).values({ labId: lab.id, email: 'dup@example.org', name: 'a', role: 'operator' })
  const error = await db.insert(schema.users).values({ labId: lab.id, email: 'dup@example.org', name: 'b', role: 'operator' }).catch((e: unknown) => e)
  const code = (error as { code?: string; cause?: { code?: string } }).cause?.code ?? (error as { code?: string }).code
  expect(code).toBe('23505')
})

test('dumpDataDir (used by backups) works through the thread', async () => {
  const file = await client.dumpDataDir('gzip')
  const bytes = new Uint8Array(await file.arrayBuffer())
  // gzip magic number 1f 8b (RFC 1952 section 2.3.1)
  expect([bytes[0], bytes[1]]).toEqual([0x1f, 0x8b])
})

test('a long query runs without blocking the main thread', async () => {
  let maxGapMs = 0
  let last = performance.now()
  const timer = setInterval(() => {
    const now = performance.now()
    maxGapMs = Math.max(maxGapMs, now - last)
    last = now
  }, 5)
  const started = performance.now()
  await db.execute(sql`select count(*) from generate_series(1, 3000000) a`)
  const queryMs = performance.now() - started
  clearInterval(timer)
  // The query takes far longer than any pause of the event loop while it runs.
  expect(queryMs).toBeGreaterThan(100)
  expect(maxGapMs).toBeLessThan(queryMs / 3)
})
