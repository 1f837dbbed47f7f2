// Device tokens (one per device link permission, per session) and the participant's feedback
// link token. Shown once at creation; only a SHA-256 hash is stored, so a database copy does
// not let anyone stream into a session or watch its feedback.
import { createHash, randomBytes } from 'node:crypto'
import { and, desc, eq } from 'drizzle-orm'
import type { Database } from '../db/client.server.ts'
import { deviceTokens, sessions } from '../db/schema.ts'

export const DEVICE_TOKEN_PREFIX = 'tdev_'
export const FEEDBACK_TOKEN_PREFIX = 'tfbk_'
export const MAX_TOKEN_HOURS = 24 * 7

export function hashSecret(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex')
}

function newSecret(prefix: string): string {
  return prefix + randomBytes(24).toString('base64url')
}

export interface CreatedDeviceToken {
  id: string
  token: string
  prefix: string
  expiresAt: Date
}

export async function createDeviceToken(
  db: Database,
  input: { labId: string; sessionId: string; createdBy: string | null; hours: number },
): Promise<CreatedDeviceToken> {
  if (!(input.hours > 0 && input.hours <= MAX_TOKEN_HOURS)) throw new Error(`a device token lives 1 minute to ${MAX_TOKEN_HOURS} hours`)
  const token = newSecret(DEVICE_TOKEN_PREFIX)
  const prefix = token.slice(0, DEVICE_TOKEN_PREFIX.length + 6)
  const expiresAt = new Date(Date.now() + input.hours * 3_600_000)
  const [row] = await db
    .insert(deviceTokens)
    .values({ labId: input.labId, sessionId: input.sessionId, prefix, tokenHash: hashSecret(token), createdBy: input.createdBy, expiresAt })
    .returning({ id: deviceTokens.id })
  return { id: row.id, token, prefix, expiresAt }
}

export async function listDeviceTokens(db: Database, sessionId: string) {
  return db
    .select({
      id: deviceTokens.id,
      prefix: deviceTokens.prefix,
      createdAt: deviceTokens.createdAt,
      expiresAt: deviceTokens.expiresAt,
      revokedAt: deviceTokens.revokedAt,
      lastUsedAt: deviceTokens.lastUsedAt,
    })
    .from(deviceTokens)
    .where(eq(deviceTokens.sessionId, sessionId))
    .orderBy(desc(deviceTokens.createdAt))
}

/** Revokes a token of this session; false if there is no such token. */
export async function revokeDeviceToken(db: Database, sessionId: string, tokenId: string): Promise<boolean> {
  const rows = await db
    .update(deviceTokens)
    .set({ revokedAt: new Date() })
    .where(and(eq(deviceTokens.id, tokenId), eq(deviceTokens.sessionId, sessionId)))
    .returning({ id: deviceTokens.id })
  return rows.length > 0
}

export type TokenCheck =
  | { ok: true; tokenId: string; sessionId: string; labId: string }
  | { ok: false; reason: 'unknown' | 'expired' | 'revoked'; sessionId: string | null }

export async function checkDeviceToken(db: Database, token: string, now = new Date()): Promise<TokenCheck> {
  const [row] = await db.select().from(deviceTokens).where(eq(deviceTokens.tokenHash, hashSecret(token)))
  if (!row) return { ok: false, reason: 'unknown', sessionId: null }
  if (row.revokedAt) return { ok: false, reason: 'revoked', sessionId: row.sessionId }
  if (row.expiresAt.getTime() <= now.getTime()) return { ok: false, reason: 'expired', sessionId: row.sessionId }
  return { ok: true, tokenId: row.id, sessionId: row.sessionId, labId: row.labId }
}

/** A new feedback link token for the session; replaces (and so invalidates) the previous one. */
export async function createFeedbackToken(db: Database, sessionId: string): Promise<string> {
  const token = newSecret(FEEDBACK_TOKEN_PREFIX)
  await db.update(sessions).set({ feedbackTokenHash: hashSecret(token) }).where(eq(sessions.id, sessionId))
  return token
}

export async function revokeFeedbackToken(db: Database, sessionId: string): Promise<void> {
  await db.update(sessions).set({ feedbackTokenHash: null }).where(eq(sessions.id, sessionId))
}

export async function checkFeedbackToken(db: Database, sessionId: string, token: string): Promise<boolean> {
  if (!token.startsWith(FEEDBACK_TOKEN_PREFIX)) return false
  const [row] = await db.select({ hash: sessions.feedbackTokenHash }).from(sessions).where(eq(sessions.id, sessionId))
  return !!row?.hash && row.hash === hashSecret(token)
}
