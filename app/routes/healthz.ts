import { sql } from 'drizzle-orm'
import type { Route } from './+types/healthz'

// Health check for monitors and orchestration: the database answers and the server is up.
export async function loader({ context }: Route.LoaderArgs) {
  const started = performance.now()
  try {
    await context.services.db.execute(sql`select 1`)
    return Response.json({ status: 'ok', db: context.services.dbKind, dbMs: Math.round((performance.now() - started) * 10) / 10, uptimeSeconds: Math.round(process.uptime()) })
  } catch {
    return Response.json({ status: 'degraded', db: 'unreachable' }, { status: 503 })
  }
}
