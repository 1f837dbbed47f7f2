// One zod schema validates a form on the server and shapes its errors for the client:
// actions return `{ errors }` keyed by field name, components show them inline.
import type { z } from 'zod'

export type FieldErrors = Record<string, string[] | undefined>

export type FormResult<T> = { ok: true; data: T } | { ok: false; errors: FieldErrors; values: Record<string, string> }

export function parseForm<S extends z.ZodType>(schema: S, form: FormData): FormResult<z.infer<S>> {
  const values: Record<string, string> = {}
  for (const [key, value] of form.entries()) if (typeof value === 'string') values[key] = value
  const multi: Record<string, unknown> = { ...values }
  for (const key of new Set(form.keys())) {
    const all = form.getAll(key)
    if (all.length > 1) multi[key] = all
  }
  const parsed = schema.safeParse(multi)
  if (parsed.success) return { ok: true, data: parsed.data }
  const errors: FieldErrors = {}
  for (const issue of parsed.error.issues) {
    const key = String(issue.path[0] ?? '_form')
    ;(errors[key] ??= []).push(issue.message)
  }
  return { ok: false, errors, values }
}
