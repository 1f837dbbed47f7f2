// /uploads — import an earlier recording (EDF, EDF+, BDF, CSV) for a participant. The file goes
// up with XMLHttpRequest so the page can show progress; if the montage's channel names differ
// from the file's, the server answers with both lists and the page asks for the matching.
import { useRef, useState } from 'react'
import { Link } from 'react-router'
import type { Route } from './+types/uploads._index'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { requireUser } from '~/server/auth.server'
import { MAX_UPLOAD_BYTES, uploadFormOptions, type ImportPlan, type ImportResult } from '~/server/uploads.server'

export const meta: Route.MetaFunction = () => [{ title: 'Import a recording · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator'] })
  return { options: await uploadFormOptions(context.services.db, user.labId), maxBytes: MAX_UPLOAD_BYTES }
}

type Reply = { ok: true; result: ImportResult } | { ok: false; message: string; field?: string; needsMapping?: ImportPlan }

export default function Uploads({ loaderData }: Route.ComponentProps) {
  const { options, maxBytes } = loaderData
  const form = useRef<HTMLFormElement>(null)
  const [progress, setProgress] = useState<number | null>(null)
  const [phase, setPhase] = useState<'idle' | 'sending' | 'checking'>('idle')
  const [reply, setReply] = useState<Reply | null>(null)
  const [plan, setPlan] = useState<ImportPlan | null>(null)
  const [mapping, setMapping] = useState<Record<string, string>>({})

  function send(event: React.FormEvent) {
    event.preventDefault()
    const el = form.current
    if (!el) return
    const body = new FormData(el)
    const file = body.get('recording')
    if (file instanceof File && file.size > maxBytes) {
      setReply({ ok: false, field: 'recording', message: `The file is ${(file.size / 1048576).toFixed(0)} MB, above the ${maxBytes / 1048576} MB limit.` })
      return
    }
    if (plan) body.set('mapping', JSON.stringify(mapping))
    // Fields first, file last: the server then knows the choices before the samples arrive.
    const ordered = new FormData()
    for (const [k, v] of body.entries()) if (k !== 'recording') ordered.append(k, v)
    if (file) ordered.append('recording', file)
    const xhr = new XMLHttpRequest()
    xhr.open('POST', '/uploads/import')
    xhr.setRequestHeader('X-Tiller-Upload', 'xhr')
    xhr.setRequestHeader('Accept', 'application/json')
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) setProgress(e.loaded / e.total)
    }
    xhr.upload.onload = () => setPhase('checking')
    xhr.onload = () => {
      setPhase('idle')
      let parsed: Reply
      try {
        parsed = JSON.parse(xhr.responseText) as Reply
      } catch {
        parsed = { ok: false, message: `The server answered ${xhr.status}.` }
      }
      setReply(parsed)
      if (!parsed.ok && parsed.needsMapping) {
        setPlan(parsed.needsMapping)
        setMapping(Object.fromEntries(parsed.needsMapping.montageNames.map((m, k) => [m, parsed.needsMapping!.match[k] >= 0 ? parsed.needsMapping!.fileChannels[parsed.needsMapping!.match[k]] : ''])))
      }
    }
    xhr.onerror = () => {
      setPhase('idle')
      setReply({ ok: false, message: 'The upload did not reach the server. Check the connection and try again.' })
    }
    setReply(null)
    setProgress(0)
    setPhase('sending')
    xhr.send(ordered)
  }

  const select = (name: string, label: string, choices: { id: string; label: string }[]) => (
    <div>
      <label className="label" htmlFor={`u-${name}`}>
        {label}
      </label>
      <select id={`u-${name}`} name={name} className="field" required defaultValue="" onChange={() => setPlan(null)}>
        <option value="" disabled>
          Choose…
        </option>
        {choices.map((c) => (
          <option key={c.id} value={c.id}>
            {c.label}
          </option>
        ))}
      </select>
    </div>
  )
  const error = reply && !reply.ok ? reply : null
  return (
    <div className="max-w-3xl">
      <PageHeader title="Import a recording" lead="An earlier recording of a participant becomes an imported session with one calibration run, ready for decoder training." />
      <form ref={form} method="post" action="/uploads/import" encType="multipart/form-data" onSubmit={send} className="panel grid gap-4" aria-describedby="upload-help">
        {select('participantId', 'Participant', options.participants)}
        {select('protocolId', 'Protocol (its classes name the cues)', options.protocols)}
        {select('montageId', 'Montage', options.montages)}
        <div>
          <label className="label" htmlFor="u-recording">
            Recording file (EDF, EDF+, BDF or CSV, up to {maxBytes / 1048576} MB)
          </label>
          <input id="u-recording" name="recording" type="file" accept=".edf,.bdf,.csv,.txt" className="field" required onChange={() => setPlan(null)} />
        </div>
        <div>
          <label className="label" htmlFor="u-cueMap">
            Cue labels in the file (optional)
          </label>
          <input id="u-cueMap" name="cueMap" className="field" placeholder="T1=left, T2=right" aria-describedby="cue-help" />
          <p id="cue-help" className="mt-1 text-xs text-haze">
            Annotations named like a class of the protocol are cues already; map other labels here.
          </p>
        </div>
        {plan ? (
          <fieldset className="rounded-md border border-brass p-4">
            <legend className="px-1 font-medium text-brass">Match the montage’s channels to the file’s</legend>
            <p role="alert" className="mb-3 text-sm">
              The file names some channels differently ({plan.fileChannels.join(', ')}). Choose the file channel of each montage site, or leave it as not recorded, then import
              again.
            </p>
            <div className="grid grid-cols-2 gap-3 md:grid-cols-4">
              {plan.montageNames.map((m) => (
                <div key={m}>
                  <label className="label" htmlFor={`map-${m}`}>
                    {m}
                  </label>
                  <select id={`map-${m}`} className="field" value={mapping[m] ?? ''} onChange={(e) => setMapping({ ...mapping, [m]: e.target.value })}>
                    <option value="">not recorded</option>
                    {plan.fileChannels.map((f) => (
                      <option key={f} value={f}>
                        {f}
                      </option>
                    ))}
                  </select>
                </div>
              ))}
            </div>
          </fieldset>
        ) : null}
        <p id="upload-help" className="text-xs text-haze">
          The file is checked as it arrives; a file with a problem is refused with the reason and nothing is imported.
        </p>
        <div className="flex items-center gap-4">
          <button type="submit" className="btn-primary" disabled={phase !== 'idle'}>
            {plan ? 'Import with this matching' : 'Import'}
          </button>
          {progress !== null && phase !== 'idle' ? (
            <div className="flex flex-1 items-center gap-3">
              <progress className="w-full" max={1} value={progress} aria-label="Upload progress" />
              <span className="text-sm tabular-nums text-haze" role="status">
                {phase === 'checking' ? 'Checking and importing…' : `${Math.round(progress * 100)} %`}
              </span>
            </div>
          ) : null}
        </div>
      </form>
      {error && !error.needsMapping ? (
        <p role="alert" className="mt-4 text-rust">
          {error.message}
        </p>
      ) : null}
      {reply?.ok ? (
        <div role="status" className="panel mt-4 border-sea">
          <p className="font-medium text-sea">
            Imported: {reply.result.trials} cued trials, {reply.result.channels.length} channels, {(reply.result.samples / reply.result.rateHz).toFixed(0)} s at {reply.result.rateHz} Hz.
          </p>
          <Link className="mt-2 inline-block underline" to={`/review/sessions/${reply.result.sessionId}`}>
            Open the imported session
          </Link>{' '}
          ·{' '}
          <Link className="underline" to={`/sessions/${reply.result.sessionId}`}>
            Train a decoder on it
          </Link>
        </div>
      ) : null}
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
