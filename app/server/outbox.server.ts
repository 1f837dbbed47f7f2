// The outbox page: e-mail Tiller sent for the lab, newest first. Without SMTP_URL the local
// fake SMTP server holds every message here and this page is their only delivery.
//
// One-time links are credentials, so who may see them is narrower than who may see the page
// (docs/decisions/010-outbox-links.md): supervisors see links in messages held locally (they
// administer the lab's accounts, and the outbox is the only way those links arrive);
// developers see links only in messages addressed to themselves; a copy of a message that
// real SMTP delivered never shows its link, which already reached the real inbox.
import { and, count, desc, eq, isNotNull } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { outbox } from '~/db/schema'
import { PAGE_SIZE } from '~/server/records.server'
import type { SessionUser } from '~/server/services'

const ONE_TIME_LINK = /https?:\/\/[^\s<>"]+\/(invite|reset)\/[A-Za-z0-9_-]+/g

export const HIDDEN_LINK = '[one-time link hidden from you]'

export function mayReadLinks(user: SessionUser, message: { to: string; delivered: boolean }): boolean {
  if (message.delivered) return false
  if (user.role === 'supervisor') return true
  return message.to
    .split(',')
    .map((a) => a.trim().toLowerCase())
    .includes(user.email.toLowerCase())
}

export function maskOneTimeLinks(text: string): string {
  return text.replace(ONE_TIME_LINK, HIDDEN_LINK)
}

export async function outboxPage(db: Database, user: SessionUser, page: number) {
  const where = and(isNotNull(outbox.labId), eq(outbox.labId, user.labId))
  const [total] = await db.select({ n: count() }).from(outbox).where(where)
  const rows = await db
    .select({ id: outbox.id, to: outbox.to, from: outbox.from, subject: outbox.subject, text: outbox.text, delivered: outbox.delivered, createdAt: outbox.createdAt })
    .from(outbox)
    .where(where)
    .orderBy(desc(outbox.createdAt), desc(outbox.id))
    .limit(PAGE_SIZE)
    .offset((page - 1) * PAGE_SIZE)
  const n = total?.n ?? 0
  return {
    page,
    pages: Math.max(1, Math.ceil(n / PAGE_SIZE)),
    total: n,
    rows: rows.map((r) => ({ ...r, text: mayReadLinks(user, r) ? r.text : maskOneTimeLinks(r.text), createdAt: r.createdAt.toISOString() })),
  }
}
