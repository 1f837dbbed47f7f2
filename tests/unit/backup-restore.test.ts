// Backup and restore of a PGlite data directory (app/server/backup.server.ts, `tiller backup`,
// `tiller restore`): the restored copy holds exactly what was there at backup time, a running
// database is not copied, a damaged archive is refused, and an existing directory is never lost.
import { spawnSync } from 'node:child_process'
import { existsSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs'
import { join } from 'node:path'
import { eq } from 'drizzle-orm'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { openDatabase } from '~/db/client.server'
import { auditEvents, participants } from '~/db/schema'
import { BackupError, backupPglite, manifestPathFor, restorePglite, rowCounts } from '~/server/backup.server'
import { seedDemo } from '~/server/demo.server'

const ROOT = join(import.meta.dirname, '..', '..')
const BASE = join(ROOT, 'tmp/backup-test')
const source = join(BASE, 'source')
const archive = join(BASE, 'out/tiller-backup.tar.gz')

beforeAll(async () => {
  rmSync(BASE, { recursive: true, force: true })
  const handle = await openDatabase(source)
  await handle.migrate()
  await seedDemo(handle.db)
  await handle.db.insert(auditEvents).values({ action: 'backup-test.marker', detail: { n: 1 } })
  await handle.close()
}, 60_000)

afterAll(() => {
  rmSync(BASE, { recursive: true, force: true })
})

describe('PGlite backup and restore', () => {
  let backedUp: Record<string, number>

  it('backs up a stopped data directory with a manifest of row counts and a checksum', async () => {
    const manifest = await backupPglite(source, archive)
    backedUp = manifest.rows
    expect(existsSync(archive)).toBe(true)
    expect(manifest.rows.users).toBe(4)
    expect(manifest.rows.participants).toBe(2)
    expect(manifest.rows.audit_events).toBeGreaterThanOrEqual(1)
    expect(manifest.archiveBytes).toBe(readFileSync(archive).byteLength)
    expect(JSON.parse(readFileSync(manifestPathFor(archive), 'utf8')).sha256).toMatch(/^[0-9a-f]{64}$/)
    // PGlite removes postmaster.pid when it closes cleanly: the directory is free again.
    expect(existsSync(join(source, 'postmaster.pid'))).toBe(false)
  })

  it('restores exactly the state at backup time, not later writes', async () => {
    const later = await openDatabase(source)
    await later.db.insert(auditEvents).values({ action: 'backup-test.after-backup' })
    await later.close()

    const target = join(BASE, 'restored')
    const result = await restorePglite(archive, target)
    expect(result.rows).toEqual(backedUp)
    expect(result.previousMovedTo).toBeNull()
    const handle = await openDatabase(target)
    try {
      const [p] = await handle.db.select().from(participants).where(eq(participants.code, 'HS-014'))
      expect(p.notes).toMatch(/morning/)
      const after = await handle.db.select().from(auditEvents).where(eq(auditEvents.action, 'backup-test.after-backup'))
      expect(after).toHaveLength(0)
      expect(await rowCounts(handle.db)).toEqual(backedUp)
    } finally {
      await handle.close()
    }
  })

  it('refuses to copy a directory a running server has open', async () => {
    const open = await openDatabase(source)
    try {
      expect(existsSync(join(source, 'postmaster.pid'))).toBe(true)
      await expect(backupPglite(source, join(BASE, 'out/while-open.tar.gz'))).rejects.toThrow(/stop the Tiller server first/)
    } finally {
      await open.close()
    }
  })

  it('keeps an existing directory: refused without --force, moved aside with it', async () => {
    const target = join(BASE, 'restored')
    await expect(restorePglite(archive, target)).rejects.toBeInstanceOf(BackupError)
    const result = await restorePglite(archive, target, { force: true })
    expect(result.previousMovedTo).toMatch(/restored\.before-restore-/)
    expect(existsSync(join(result.previousMovedTo!, 'PG_VERSION'))).toBe(true)
    expect(result.rows).toEqual(backedUp)
  })

  it('refuses a damaged archive and leaves the target as it was', async () => {
    const damaged = join(BASE, 'out/damaged.tar.gz')
    const bytes = readFileSync(archive)
    bytes[Math.floor(bytes.length / 2)] ^= 0xff
    writeFileSync(damaged, bytes)
    writeFileSync(manifestPathFor(damaged), readFileSync(manifestPathFor(archive)))
    const target = join(BASE, 'restored')
    const before = readdirSync(target).sort()
    await expect(restorePglite(damaged, target, { force: true })).rejects.toThrow(/checksum differs/)
    expect(readdirSync(target).sort()).toEqual(before)
  })

  it('works from the command line: tiller backup, tiller restore', () => {
    const cliArchive = join(BASE, 'out/cli.tar.gz')
    const env = { ...process.env, TILLER_DATA_DIR: source, DATABASE_URL: '' }
    const backup = spawnSync('node', ['bin/tiller.js', 'backup', cliArchive], { cwd: ROOT, env, encoding: 'utf8', timeout: 60_000 })
    expect(backup.status, backup.stderr).toBe(0)
    expect(backup.stdout).toMatch(/backup written/)
    const restore = spawnSync('node', ['bin/tiller.js', 'restore', cliArchive], {
      cwd: ROOT,
      env: { ...env, TILLER_DATA_DIR: join(BASE, 'cli-restored') },
      encoding: 'utf8',
      timeout: 60_000,
    })
    expect(restore.status, restore.stderr).toBe(0)
    expect(restore.stdout).toMatch(/rows: labs 1, users 4/)
  })
})
