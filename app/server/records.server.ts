// Lab-owned records are reached by id only inside the user's lab. Anything else — an id of
// another lab, a deleted row, a malformed id — answers the same 404, so ids cannot be probed.
import { data } from 'react-router'
import { z } from 'zod'

const uuid = z.string().uuid()

export function isUuid(value: unknown): value is string {
  return uuid.safeParse(value).success
}

export function notFound(what: string): never {
  throw data({ message: `No such ${what} in your lab.` }, { status: 404 })
}

/** Rows per page on the paginated lists (audit log, outbox). */
export const PAGE_SIZE = 50

/** A 1-based page number from the query string; anything odd is page 1. */
export function pageFrom(url: URL): number {
  const n = Number(url.searchParams.get('page'))
  return Number.isInteger(n) && n >= 1 && n <= 100_000 ? n : 1
}

/** True for PostgreSQL's unique_violation (23505), also when Drizzle wraps the driver error. */
export function isUniqueViolation(error: unknown): boolean {
  for (let e: unknown = error, depth = 0; e && depth < 4; e = (e as { cause?: unknown }).cause, depth++) {
    if ((e as { code?: unknown }).code === '23505') return true
  }
  return false
}
