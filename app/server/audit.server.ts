// The audit trail: security-relevant and record-changing actions, visible to supervisors.
import type { Database } from '~/db/client.server'
import { auditEvents } from '~/db/schema'

export interface AuditEntry {
  labId: string | null
  actorId: string | null
  action: string
  target?: string | null
  detail?: Record<string, unknown>
  ip?: string | null
}

export async function audit(db: Database, entry: AuditEntry): Promise<void> {
  await db.insert(auditEvents).values({
    labId: entry.labId,
    actorId: entry.actorId,
    action: entry.action,
    target: entry.target ?? null,
    detail: entry.detail ?? {},
    ip: entry.ip ?? null,
  })
}

/** The client address as server.ts recorded it (it sets x-tiller-client-ip from the socket). */
export function clientIp(request: Request): string | null {
  return request.headers.get('x-tiller-client-ip')
}
