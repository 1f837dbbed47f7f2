// Property-based fuzzing of every form and query validator the server uses. The schemas are
// found at test time: each exported zod schema of app/server/** and app/lib/** (a new one is
// fuzzed without editing this file). Each goes through parseForm (app/lib/forms.ts), exactly
// as an action receives a browser form, with generated and mutated FormData. The properties:
// parseForm never throws, never hangs, and a refusal names a field of the form with a short
// human message (no stack trace, no "[object Object]").
import { readdirSync, readFileSync, statSync } from 'node:fs'
import { join, relative } from 'node:path'
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { z } from 'zod'
import { parseForm } from '~/lib/forms'

const ROOT = join(import.meta.dirname, '..', '..')
const SEARCHED = ['app/server', 'app/lib']
const MAX_CALL_MS = 250

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const path = join(dir, name)
    if (statSync(path).isDirectory()) return sourceFiles(path)
    return /\.tsx?$/.test(name) && !name.endsWith('.d.ts') ? [path] : []
  })
}

interface FoundSchema {
  name: string
  file: string
  schema: z.ZodType
  fields: string[]
}

/** Field names of a zod schema, looking through pipes, refinements, unions and wrappers. */
function fieldNames(schema: unknown, seen = new Set<unknown>()): string[] {
  if (!schema || typeof schema !== 'object' || seen.has(schema)) return []
  seen.add(schema)
  const def = (schema as { _zod?: { def?: Record<string, unknown> } })._zod?.def
  if (!def) return []
  const names = new Set<string>()
  if (def.type === 'object' && def.shape && typeof def.shape === 'object') for (const key of Object.keys(def.shape)) names.add(key)
  for (const key of ['in', 'out', 'innerType', 'schema', 'left', 'right']) for (const n of fieldNames(def[key], seen)) names.add(n)
  if (Array.isArray(def.options)) for (const option of def.options) for (const n of fieldNames(option, seen)) names.add(n)
  return [...names]
}

async function discoverSchemas(): Promise<FoundSchema[]> {
  const found: FoundSchema[] = []
  for (const dir of SEARCHED) {
    for (const file of sourceFiles(join(ROOT, dir))) {
      if (!/from 'zod'/.test(readFileSync(file, 'utf8'))) continue
      const mod = (await import(file)) as Record<string, unknown>
      for (const [name, value] of Object.entries(mod)) {
        // Form schemas only: a field-level schema (a bare z.string()) is fuzzed through the forms that use it.
        if (value instanceof z.ZodType && fieldNames(value).length > 0) found.push({ name, file: relative(ROOT, file), schema: value, fields: fieldNames(value) })
      }
    }
  }
  return found
}

/**
 * Valid submissions for the schemas known today, so mutations start from a form that passes.
 * A schema without a seed is still fuzzed with generated forms.
 */
const SEEDS: Record<string, Record<string, string>[]> = {
  signInSchema: [{ email: 'tomas.reyes@harbourside.example', password: 'demo-operator-2026' }],
  participantSchema: [
    { code: 'HS-020', yearOfBirth: '1990', handedness: 'right', consentStatus: 'given', consentDate: '2025-03-01', notes: '' },
    { code: 'p.7', yearOfBirth: '', handedness: 'left', consentStatus: 'pending', consentDate: '', notes: 'quiet room' },
  ],
  prepareSessionSchema: [
    {
      participantId: '7f1c6a52-7f8e-4a59-9d1f-0c1b9a3c2d10',
      montageId: '2a4b6c8d-1e3f-4a5b-8c7d-9e0f1a2b3c4d',
      protocolId: '5d6e7f80-9a1b-4c2d-8e3f-4a5b6c7d8e9f',
      notes: 'first visit',
      cautionsRead: 'on',
    },
  ],
  montageCreateSchema: [
    { source: 'preset', preset: '16', name: 'Sixteen', reference: 'FCz', ground: 'AFz' },
    { source: 'csv', csv: 'name,x,y,z\nC3,-0.7,0,0.7\nC4,0.7,0,0.7\n', name: 'Pair', reference: 'linked earlobes', ground: 'AFz' },
  ],
  montageEditSchema: [{ name: 'Renamed', reference: 'FCz', ground: 'AFz' }],
  sessionLinkSchema: [{ intent: 'create-token', hours: '12' }, { intent: 'revoke-token', tokenId: '5d6e7f80-9a1b-4c2d-8e3f-4a5b6c7d8e9f' }, { intent: 'feedback-link' }],
  sessionLogQuery: [{ sort: 'created', dir: 'desc', page: '1', pageSize: '25', from: '2025-01-01', to: '2025-02-01' }, {}],
}

/** Strings a hostile or broken client sends: empty, huge, control characters, markup, SQL. */
const nastyString = fc.oneof(
  fc.string({ maxLength: 40 }),
  fc.string({ unit: 'grapheme', maxLength: 40 }),
  fc.string({ unit: 'binary', maxLength: 40 }),
  fc.constantFrom(
    '',
    ' ',
    '\u0000',
    '\r\n',
    '-1',
    '0',
    '1e308',
    'NaN',
    'Infinity',
    '9'.repeat(400),
    'x'.repeat(5000),
    '<script>alert(1)</script>',
    "' OR 1=1 --",
    '../../etc/passwd',
    '__proto__',
    '{"$gt":""}',
    '2025-02-30',
    '0000-00-00',
    '9999-12-31',
    '00000000-0000-0000-0000-000000000000',
    'on',
    'true',
  ),
)

const seenMessages = new Set<string>()

function toFormData(values: Record<string, string | string[]>): FormData {
  const form = new FormData()
  for (const [key, value] of Object.entries(values)) for (const item of Array.isArray(value) ? value : [value]) form.append(key, item)
  return form
}

/**
 * A message may quote what was sent ('C3x' is not a site); the quote is not counted against the
 * length bound. (Quoting a whole 5 KB line back is still poor: see the report for montage CSV.)
 */
function withoutQuotedInput(message: string, form: FormData): string {
  const sent = [...form.values()].filter((v): v is string => typeof v === 'string')
  return message.replace(/'([^']*)'|“([^”]*)”|"([^"]*)"/g, (whole, a, b, c) => {
    const quoted = String(a ?? b ?? c ?? '')
    return sent.some((v) => v.includes(quoted)) ? "'…'" : whole
  })
}

function checkResult(found: FoundSchema, form: FormData) {
  const started = performance.now()
  const result = parseForm(found.schema, form)
  expect(performance.now() - started).toBeLessThan(MAX_CALL_MS)
  if (result.ok) return result
  if (process.env.FUZZ_PRINT_MESSAGES) for (const m of Object.values(result.errors).flat()) seenMessages.add(`${found.name}: ${m}`)
  const known = new Set([...found.fields, '_form'])
  for (const [field, messages] of Object.entries(result.errors)) {
    expect(known.has(field), `${found.name}: error on unknown field ${field}`).toBe(true)
    for (const message of messages ?? []) {
      expect(typeof message).toBe('string')
      expect(message.length).toBeGreaterThan(3)
      expect(withoutQuotedInput(message, form).length).toBeLessThan(300)
      expect(message).not.toMatch(/\n\s+at |\[object Object\]|undefined is not|TypeError/)
    }
  }
  return result
}

const schemas = await discoverSchemas()
// Thousands of inputs in all, spread over however many validators exist, so the file stays < 20 s.
const formRuns = Math.max(200, Math.min(800, Math.floor(6000 / schemas.length)))
const mutationRuns = Math.max(300, Math.min(1500, Math.floor(9000 / schemas.length)))

describe('form validators under fuzzing', () => {
  it('finds the validators the actions use', () => {
    const names = schemas.map((s) => s.name)
    for (const expected of ['signInSchema', 'participantSchema', 'prepareSessionSchema']) expect(names).toContain(expected)
  })

  for (const found of schemas) {
    describe(`${found.name} (${found.file})`, () => {
      it('takes arbitrary forms (its own fields, stray fields, repeated fields) without throwing', () => {
        const key = fc.oneof({ weight: 4, arbitrary: fc.constantFrom(...found.fields) }, { weight: 1, arbitrary: fc.string({ maxLength: 12 }) })
        const value = fc.oneof({ weight: 4, arbitrary: nastyString }, { weight: 1, arbitrary: fc.array(nastyString, { minLength: 2, maxLength: 3 }) })
        fc.assert(
          fc.property(fc.dictionary(key, value, { maxKeys: found.fields.length + 3 }), (values) => {
            checkResult(found, toFormData(values))
          }),
          { numRuns: formRuns },
        )
      })

      const seeds = SEEDS[found.name]
      if (!seeds) return

      it('accepts its valid seed forms', () => {
        for (const seed of seeds) expect(parseForm(found.schema, toFormData(seed)).ok, JSON.stringify(seed)).toBe(true)
      })

      it('refuses or accepts every one-field mutation of a valid form, naming a field when it refuses', () => {
        fc.assert(
          fc.property(
            fc.constantFrom(...seeds),
            fc.constantFrom(...found.fields),
            fc.oneof(nastyString, fc.constant(null), fc.array(nastyString, { minLength: 2, maxLength: 2 })),
            (seed, field, replacement) => {
              const values: Record<string, string | string[]> = { ...seed }
              if (replacement === null) delete values[field]
              else values[field] = replacement
              checkResult(found, toFormData(values))
            },
          ),
          { numRuns: mutationRuns },
        )
      })
    })
  }
})

if (process.env.FUZZ_PRINT_MESSAGES) {
  // FUZZ_PRINT_MESSAGES=1 lists every distinct refusal, to review wording by eye.
  describe('messages', () => it('prints', () => console.log([...seenMessages].sort().join('\n'))))
}
