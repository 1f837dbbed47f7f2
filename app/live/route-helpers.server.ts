// Shared by the live resource routes: who may do what, form parsing and error replies. Kept free
// of the live runtime itself so route modules stay light in the app bundle.
import type { z } from 'zod'
import type { Role } from '../server/services.ts'

/** Who may watch the console stream and annotate. */
export const LIVE_WATCH_ROLES: Role[] = ['operator', 'supervisor', 'developer']
/** Who may control runs, device tokens, the feedback link, training and the active decoder. */
export const LIVE_CONTROL_ROLES: Role[] = ['operator', 'developer']

/** Parses a form (or JSON) body with a zod schema; a 400 with the first problem otherwise. */
export async function readBody<T extends z.ZodType>(request: Request, schema: T): Promise<z.infer<T>> {
  let raw: Record<string, unknown>
  const type = request.headers.get('Content-Type') ?? ''
  if (type.includes('application/json')) {
    raw = (await request.json().catch(() => null)) ?? {}
  } else {
    const form = await request.formData()
    raw = {}
    for (const key of new Set(form.keys())) {
      const all = form.getAll(key).filter((v): v is string => typeof v === 'string')
      raw[key] = key.endsWith('Ids') ? all : all[0]
    }
  }
  const parsed = schema.safeParse(raw)
  if (!parsed.success) {
    const issue = parsed.error.issues[0]
    throw Response.json({ ok: false, message: `${issue.path.join('.') || 'form'}: ${issue.message}` }, { status: 400 })
  }
  return parsed.data
}

/** Turns a refused live action into a JSON reply with its status; anything else is rethrown. */
export async function answer<T>(fn: () => Promise<T>): Promise<Response> {
  try {
    return Response.json(await fn())
  } catch (error) {
    if (error instanceof Error && error.name === 'LiveError') {
      const status = (error as Error & { status?: number }).status ?? 409
      return Response.json({ ok: false, message: error.message }, { status })
    }
    throw error
  }
}
