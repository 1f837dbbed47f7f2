// Montages of a lab: channel names with unit-sphere positions (from a 10-20/10-10 preset or
// an uploaded CSV), the reference and the ground. Supervisors create and edit; a montage that
// sessions already use keeps its channels and reference, so their recordings stay readable.
import { and, asc, eq, sql } from 'drizzle-orm'
import { data } from 'react-router'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { montages, sessions, type MontageChannel } from '~/db/schema'
import { MontageError, montagePreset, parseMontageCsv, PRESET_COUNTS, presetName, type PresetCount } from '~/engine/montage'
import { audit } from '~/server/audit.server'
import { isUuid, notFound } from '~/server/records.server'
import type { SessionUser } from '~/server/services'

/** Largest montage file accepted: a 256-channel CSV with positions is well under 16 KB. */
export const MAX_CSV_BYTES = 256 * 1024

export const MAX_CHANNELS = 256

const electrodeLabel = z.string().trim().max(40, 'Keep this to 40 characters')

const commonFields = {
  name: z.string().trim().min(1, 'Give the montage a name').max(80, 'Keep the name to 80 characters'),
  reference: electrodeLabel.min(1, 'Say where the reference electrode is (a site such as FCz, or e.g. “linked earlobes”)'),
  ground: electrodeLabel.min(1, 'Say where the ground electrode is (e.g. AFz)'),
}

export const montageCreateSchema = z
  .discriminatedUnion('source', [
    z.object({
      source: z.literal('preset'),
      preset: z.coerce
        .number()
        .refine((n): n is PresetCount => (PRESET_COUNTS as readonly number[]).includes(n), `Choose one of the presets: ${PRESET_COUNTS.join(', ')} channels`),
      ...commonFields,
    }),
    z.object({
      source: z.literal('csv'),
      csv: z
        .string()
        .max(MAX_CSV_BYTES, 'That file is too large for a montage')
        .min(1, 'Choose a CSV file or paste its lines')
        .superRefine((text, ctx) => {
          // The engine's parser names the offending line; its message goes under the field.
          try {
            const channels = parseMontageCsv(text)
            if (channels.length > MAX_CHANNELS) ctx.addIssue({ code: 'custom', message: `A montage has at most ${MAX_CHANNELS} channels; this file lists ${channels.length}` })
          } catch (error) {
            if (!(error instanceof MontageError)) throw error
            ctx.addIssue({ code: 'custom', message: `The file could not be read: ${error.message}` })
          }
        }),
      ...commonFields,
    }),
  ], { message: 'Choose a preset or a CSV file' })
  .superRefine(refineReferenceGround)

export const montageEditSchema = z.object(commonFields).superRefine(refineReferenceGround)

function refineReferenceGround(v: { reference: string; ground: string }, ctx: z.RefinementCtx) {
  if (v.reference && v.ground && v.reference.toLowerCase() === v.ground.toLowerCase()) {
    ctx.addIssue({ code: 'custom', path: ['ground'], message: 'Ground and reference are separate electrodes' })
  }
}

export type MontageCreateInput = z.infer<typeof montageCreateSchema>

/** Channels of the chosen source; a CSV error names its line and is reported on the csv field. */
export function channelsFor(input: MontageCreateInput): MontageChannel[] {
  if (input.source === 'preset') return montagePreset(input.preset as PresetCount).map(({ name, x, y, z }) => ({ name, x, y, z }))
  return parseMontageCsv(input.csv).map(({ name, x, y, z }) => ({ name, x, y, z }))
}

export { MontageError }

/**
 * The montage form as plain fields: an uploaded CSV file (multipart) becomes the `csv` text
 * field, so one zod schema checks a file and pasted lines alike. Oversized bodies are refused
 * before they are read.
 */
export async function montageFormData(request: Request): Promise<FormData> {
  const declared = Number(request.headers.get('Content-Length') ?? 0)
  if (declared > MAX_CSV_BYTES * 2 + 16_384) throw data({ message: `That upload is too large; a montage file is at most ${MAX_CSV_BYTES / 1024} KB.` }, { status: 413 })
  const form = await request.formData()
  const out = new FormData()
  for (const [key, value] of form.entries()) if (typeof value === 'string' && key !== 'csvFile') out.append(key, value)
  const file = form.get('csvFile')
  if (file && typeof file !== 'string' && file.size > 0) {
    if (file.size > MAX_CSV_BYTES) throw data({ message: `That file has ${file.size} bytes; a montage file is at most ${MAX_CSV_BYTES / 1024} KB.` }, { status: 413 })
    out.set('csv', await file.text())
  }
  return out
}

export const PRESETS = PRESET_COUNTS.map((n) => ({ count: n, name: presetName(n) }))

const usedBy = sql<number>`(select count(*)::int from ${sessions} where ${sessions.montageId} = ${montages.id})`

export async function listMontages(db: Database, user: SessionUser) {
  const rows = await db
    .select({ id: montages.id, name: montages.name, channels: montages.channels, reference: montages.reference, ground: montages.ground, createdAt: montages.createdAt, sessions: usedBy })
    .from(montages)
    .where(eq(montages.labId, user.labId))
    .orderBy(asc(montages.name))
  return rows.map((r) => ({ ...r, createdAt: r.createdAt.toISOString() }))
}

export async function getMontage(db: Database, user: SessionUser, id: string) {
  if (!isUuid(id)) notFound('montage')
  const [row] = await db
    .select({ montage: montages, sessions: usedBy })
    .from(montages)
    .where(and(eq(montages.id, id), eq(montages.labId, user.labId)))
  if (!row) notFound('montage')
  return { ...row.montage, createdAt: row.montage.createdAt.toISOString(), sessions: row.sessions }
}

export async function createMontage(db: Database, user: SessionUser, input: MontageCreateInput) {
  const channels = channelsFor(input)
  const [row] = await db
    .insert(montages)
    .values({ labId: user.labId, name: input.name, channels, reference: input.reference, ground: input.ground })
    .returning()
  await audit(db, {
    labId: user.labId,
    actorId: user.id,
    action: 'montage.created',
    target: row.name,
    detail: { montageId: row.id, source: input.source, channels: channels.length },
  })
  return row
}

export class MontageInUseError extends Error {}

export async function updateMontage(db: Database, user: SessionUser, id: string, input: z.infer<typeof montageEditSchema>) {
  const before = await getMontage(db, user, id)
  // Sessions interpret their recordings through the montage's reference: keep it fixed once used.
  if (before.sessions > 0 && before.reference !== input.reference) {
    throw new MontageInUseError(`${before.sessions} session(s) were recorded with reference ${before.reference}; create a new montage for a different reference`)
  }
  const [row] = await db
    .update(montages)
    .set({ name: input.name, reference: input.reference, ground: input.ground })
    .where(and(eq(montages.id, id), eq(montages.labId, user.labId)))
    .returning()
  await audit(db, { labId: user.labId, actorId: user.id, action: 'montage.updated', target: row.name, detail: { montageId: row.id } })
  return row
}

