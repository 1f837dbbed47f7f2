// Reading the lab's audit trail (audit.server.ts writes it): newest first, a page at a time.
import { count, desc, eq } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { auditEvents, users } from '~/db/schema'
import { PAGE_SIZE } from '~/server/records.server'
import type { SessionUser } from '~/server/services'

export async function auditPage(db: Database, user: SessionUser, page: number) {
  const [total] = await db.select({ n: count() }).from(auditEvents).where(eq(auditEvents.labId, user.labId))
  const rows = await db
    .select({
      id: auditEvents.id,
      at: auditEvents.at,
      action: auditEvents.action,
      target: auditEvents.target,
      detail: auditEvents.detail,
      ip: auditEvents.ip,
      actorName: users.name,
      actorEmail: users.email,
    })
    .from(auditEvents)
    .leftJoin(users, eq(users.id, auditEvents.actorId))
    .where(eq(auditEvents.labId, user.labId))
    // The id breaks ties between events written in the same millisecond.
    .orderBy(desc(auditEvents.at), desc(auditEvents.id))
    .limit(PAGE_SIZE)
    .offset((page - 1) * PAGE_SIZE)
  const n = total?.n ?? 0
  return {
    page,
    pages: Math.max(1, Math.ceil(n / PAGE_SIZE)),
    total: n,
    rows: rows.map((r) => ({ ...r, at: r.at.toISOString() })),
  }
}
