// Bearer API tokens for developers. The token is shown once, at creation; only its SHA-256
// hash and a short prefix (to tell tokens apart in lists) are stored. auth.server.ts
// getApiUser checks them on each API request. Creation and revocation are audited.
import { and, desc, eq, isNull } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { apiTokens } from '~/db/schema'
import { audit } from '~/server/audit.server'
import { hashToken, newToken } from '~/server/passwords.server'
import { isUuid, notFound } from '~/server/records.server'
import type { SessionUser } from '~/server/services'

export const TOKEN_PREFIX = 'tlr'
/** Characters of the token kept in clear to recognise it: 'tlr_' plus six. */
const SHOWN_PREFIX_LENGTH = TOKEN_PREFIX.length + 1 + 6

export const tokenNameSchema = z.string().trim().min(1, 'Name the token after what will use it, e.g. “analysis notebook”').max(60, 'Keep the name to 60 characters')

export const apiTokenActionSchema = z.discriminatedUnion('intent', [
  z.object({
    intent: z.literal('create'),
    name: tokenNameSchema,
    expires: z.enum(['30', '90', '365', 'never'], { message: 'Choose when the token expires' }).default('90'),
  }),
  z.object({ intent: z.literal('revoke'), tokenId: z.string().uuid('Unknown token') }),
], { message: 'Unknown request' })

export type ApiTokenAction = z.infer<typeof apiTokenActionSchema>

export async function createApiToken(db: Database, user: Pick<SessionUser, 'id' | 'labId' | 'role'>, input: { name: string; expiresDays: number | null }, via: 'web' | 'cli' = 'web') {
  if (user.role !== 'developer') throw new Error('API tokens are issued to developers only')
  const token = newToken(TOKEN_PREFIX)
  const expiresAt = input.expiresDays ? new Date(Date.now() + input.expiresDays * 86_400_000) : null
  const [row] = await db
    .insert(apiTokens)
    .values({ labId: user.labId, userId: user.id, name: input.name, prefix: token.slice(0, SHOWN_PREFIX_LENGTH), tokenHash: hashToken(token), expiresAt })
    .returning()
  await audit(db, { labId: user.labId, actorId: user.id, action: 'api-token.created', target: row.name, detail: { tokenId: row.id, prefix: row.prefix, via, expires: expiresAt?.toISOString() ?? 'never' } })
  return { token, row }
}

/** The user's own tokens, newest first, with their state. */
export async function listApiTokens(db: Database, user: SessionUser) {
  const rows = await db
    .select({ id: apiTokens.id, name: apiTokens.name, prefix: apiTokens.prefix, createdAt: apiTokens.createdAt, expiresAt: apiTokens.expiresAt, revokedAt: apiTokens.revokedAt, lastUsedAt: apiTokens.lastUsedAt })
    .from(apiTokens)
    .where(and(eq(apiTokens.userId, user.id), eq(apiTokens.labId, user.labId)))
    .orderBy(desc(apiTokens.createdAt))
  const now = Date.now()
  return rows.map((r) => ({
    ...r,
    state: r.revokedAt ? ('revoked' as const) : r.expiresAt && r.expiresAt.getTime() < now ? ('expired' as const) : ('active' as const),
    createdAt: r.createdAt.toISOString(),
    expiresAt: r.expiresAt?.toISOString() ?? null,
    revokedAt: r.revokedAt?.toISOString() ?? null,
    lastUsedAt: r.lastUsedAt?.toISOString() ?? null,
  }))
}

/** Revokes one of the user's own tokens; anyone else's id is a 404. Revoking twice is harmless. */
export async function revokeApiToken(db: Database, user: SessionUser, tokenId: string) {
  if (!isUuid(tokenId)) notFound('API token')
  const [row] = await db.select().from(apiTokens).where(and(eq(apiTokens.id, tokenId), eq(apiTokens.userId, user.id), eq(apiTokens.labId, user.labId)))
  if (!row) notFound('API token')
  if (row.revokedAt) return row
  const [revoked] = await db
    .update(apiTokens)
    .set({ revokedAt: new Date() })
    .where(and(eq(apiTokens.id, row.id), isNull(apiTokens.revokedAt)))
    .returning()
  await audit(db, { labId: user.labId, actorId: user.id, action: 'api-token.revoked', target: row.name, detail: { tokenId: row.id, prefix: row.prefix } })
  return revoked ?? row
}

/** Applies the form's intent: create (returns the token once) or revoke. */
export async function applyApiTokenAction(db: Database, user: SessionUser, action: ApiTokenAction) {
  if (action.intent === 'create') {
    const { token, row } = await createApiToken(db, user, { name: action.name, expiresDays: action.expires === 'never' ? null : Number(action.expires) })
    return { created: { token, name: row.name }, revoked: null }
  }
  const row = await revokeApiToken(db, user, action.tokenId)
  return { created: null, revoked: row.name }
}
