// `tiller export` — the review exports from the command line, straight from the database:
// decisions and trials as CSV (or decisions as NDJSON), a run's recording as EDF+/BDF/CSV, a
// decoder as JSON, the session log as JSON. With PGlite the server must not be running on the
// same data directory (one process per directory); use the /api/v1 routes then.
import { createWriteStream, writeFileSync } from 'node:fs'
import { Readable } from 'node:stream'
import { pipeline } from 'node:stream/promises'
import { parseArgs } from 'node:util'
import { eq } from 'drizzle-orm'
import { z } from 'zod'
import { labs } from '~/db/schema'
import { decisionsCsv, decisionsNdjson, decoderDocument, ExportError, runRecordingFile, trialsCsv } from '~/server/exports.server'
import { listSessions, sessionLogQuery } from '~/server/review.server'
import { openConfiguredDatabase } from '../db-open.ts'

export const summary = 'exports: `tiller export decisions|trials|recording|decoder|sessions ...` writes CSV, NDJSON, EDF+ or JSON'

const USAGE = `usage:
  tiller export decisions --run ID | --session ID [--format csv|ndjson] [--out FILE]
  tiller export trials    --run ID | --session ID [--out FILE]
  tiller export recording --run ID [--format edf|bdf|csv] --out FILE
  tiller export decoder   --id ID [--out FILE]
  tiller export sessions  --lab ID [--participant ID] [--status S] [--signoff S] [--from YYYY-MM-DD] [--to YYYY-MM-DD] [--out FILE]
Without --out, text goes to standard output.`

const id = z.string().uuid('must be an id (UUID)')
const options = {
  run: { type: 'string' },
  session: { type: 'string' },
  id: { type: 'string' },
  lab: { type: 'string' },
  format: { type: 'string' },
  out: { type: 'string' },
  participant: { type: 'string' },
  status: { type: 'string' },
  signoff: { type: 'string' },
  from: { type: 'string' },
  to: { type: 'string' },
  help: { type: 'boolean' },
} as const

async function writeStream(stream: ReadableStream<Uint8Array>, out: string | undefined): Promise<void> {
  const node = Readable.fromWeb(stream as never)
  if (out) await pipeline(node, createWriteStream(out))
  else await pipeline(node, process.stdout as never)
}

function writeText(text: string | Uint8Array, out: string | undefined): void {
  if (out) writeFileSync(out, text)
  else process.stdout.write(text)
}

function fail(message: string): number {
  console.error(`tiller export: ${message}`)
  return 2
}

export async function run(args: string[]): Promise<number> {
  const [what, ...rest] = args
  let values: Record<string, string | boolean | undefined>
  try {
    values = parseArgs({ args: rest, options }).values
  } catch (error) {
    return fail(`${(error as Error).message}\n${USAGE}`)
  }
  if (!what || what === '--help' || values.help) {
    console.log(USAGE)
    return what ? 0 : 2
  }
  const check = (name: string) => {
    const v = values[name]
    if (v === undefined) return undefined
    const parsed = id.safeParse(v)
    if (!parsed.success) throw new Error(`--${name} ${parsed.error.issues[0].message}`)
    return parsed.data
  }
  let scope: { runId: string } | { sessionId: string } | null = null
  try {
    const runId = check('run')
    const sessionId = check('session')
    scope = runId ? { runId } : sessionId ? { sessionId } : null
  } catch (error) {
    return fail((error as Error).message)
  }
  const out = values.out as string | undefined
  const handle = await openConfiguredDatabase()
  const db = handle.db
  try {
    switch (what) {
      case 'decisions': {
        if (!scope) return fail('give --run ID or --session ID')
        const format = (values.format as string | undefined) ?? 'csv'
        if (format !== 'csv' && format !== 'ndjson') return fail('--format must be csv or ndjson')
        await writeStream(format === 'csv' ? decisionsCsv(db, scope) : decisionsNdjson(db, scope), out)
        return 0
      }
      case 'trials':
        if (!scope) return fail('give --run ID or --session ID')
        writeText(await trialsCsv(db, scope), out)
        return 0
      case 'recording': {
        if (!scope || !('runId' in scope)) return fail('give --run ID')
        if (!out) return fail('give --out FILE (the recording is binary)')
        const format = (values.format as string | undefined) ?? 'edf'
        if (format !== 'edf' && format !== 'bdf' && format !== 'csv') return fail('--format must be edf, bdf or csv')
        const bytes = await runRecordingFile(db, scope.runId, format)
        writeFileSync(out, bytes)
        console.error(`wrote ${out} (${bytes.length} bytes)`)
        return 0
      }
      case 'decoder': {
        const decoderId = check('id')
        if (!decoderId) return fail('give --id DECODER_ID')
        writeText(`${JSON.stringify(await decoderDocument(db, decoderId), null, 1)}\n`, out)
        return 0
      }
      case 'sessions': {
        const labId = check('lab')
        if (!labId) return fail('give --lab ID')
        const [lab] = await db.select().from(labs).where(eq(labs.id, labId))
        if (!lab) return fail(`no lab ${labId}`)
        const query = sessionLogQuery.safeParse({ participant: values.participant, status: values.status, signoff: values.signoff, from: values.from, to: values.to, pageSize: '200' })
        if (!query.success) return fail(query.error.issues.map((i) => `--${String(i.path[0])}: ${i.message}`).join('; '))
        const rows = []
        for (let page = 1; ; page++) {
          const result = await listSessions(db, labId, { ...query.data, page })
          rows.push(...result.rows)
          if (page >= result.pageCount) break
        }
        writeText(`${JSON.stringify({ lab: lab.name, total: rows.length, rows }, null, 1)}\n`, out)
        return 0
      }
      default:
        return fail(`unknown export '${what}'\n${USAGE}`)
    }
  } catch (error) {
    if (error instanceof ExportError || (error as Error).name === 'RecordingFormatError') {
      console.error(`tiller export: ${(error as Error).message}`)
      return 1
    }
    throw error
  } finally {
    await handle.close()
  }
}
