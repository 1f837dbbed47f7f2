import { useEffect } from 'react'
import { Form, Link, useNavigation, useRevalidator, useSearchParams } from 'react-router'
import type { Route } from './+types/bench'
import { FieldError, PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { StatusBadge } from '~/components/console/status-badge'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import {
  BenchError,
  benchActionSchema,
  benchSessions,
  benchStatus,
  injectBenchFault,
  startBenchDevice,
  stopBenchDevice,
  updateBenchDevice,
} from '~/server/bench.server'
import { DEFAULT_BENCH_SETTINGS, type BenchSettings } from '~/lib/bench-settings'
import { FAULT_KINDS } from '../../simulator/faults'

export const meta: Route.MetaFunction = () => [{ title: 'Bench · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['developer'] })
  const list = await benchSessions(context.services.db, user.labId)
  const wanted = new URL(request.url).searchParams.get('session')
  const selected = list.find((s) => s.id === wanted) ?? list.find((s) => s.running) ?? list[0] ?? null
  return { sessions: list, selected, status: selected ? benchStatus(selected.id, user.labId) : null }
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['developer'] })
  const parsed = parseForm(benchActionSchema, await request.formData())
  if (!parsed.ok) return { errors: parsed.errors }
  const input = parsed.data
  const { db, config } = context.services
  try {
    switch (input.intent) {
      case 'start': {
        const { intent: _i, sessionId, rateHz, seed, ...settings } = input
        await startBenchDevice(db, config, user, { sessionId, rateHz, seed, settings })
        return { ok: 'Simulated device started.' }
      }
      case 'update': {
        const { intent: _i, sessionId, ...settings } = input
        updateBenchDevice(sessionId, user, settings)
        return { ok: 'Settings applied to the running device.' }
      }
      case 'inject':
        injectBenchFault(input.sessionId, user, input.kind)
        return { ok: `One ${input.kind} fault injected.` }
      case 'stop':
        await stopBenchDevice(db, input.sessionId, user)
        return { ok: 'Simulated device stopped; its token is revoked.' }
    }
  } catch (error) {
    if (error instanceof BenchError || (error instanceof Error && /must|between|probability/.test(error.message))) return { errors: { _form: [error.message] } }
    throw error
  }
}

type Errors = Record<string, string[] | undefined>

function NumberField({ name, label, value, step, min, max, errors, hint }: { name: keyof BenchSettings | 'seed'; label: string; value: number | string; step?: number; min?: number; max?: number; errors: Errors; hint?: string }) {
  return (
    <div>
      <label className="label" htmlFor={`bench-${name}`}>
        {label}
      </label>
      <input id={`bench-${name}`} name={name} type="number" defaultValue={value} step={step ?? 'any'} min={min} max={max} className="field py-1" aria-describedby={`bench-${name}-error`} />
      {hint ? <p className="mt-0.5 text-xs text-haze">{hint}</p> : null}
      <FieldError id={`bench-${name}-error`} message={errors[name]} />
    </div>
  )
}

function SettingsFields({ s, errors }: { s: BenchSettings; errors: Errors }) {
  return (
    <>
      <fieldset className="grid grid-cols-2 gap-3 md:grid-cols-4">
        <legend className="mb-2 text-sm font-bold">Participant</legend>
        <NumberField name="skill" label="Skill (0–1)" value={s.skill} step={0.05} min={0} max={1} errors={errors} hint="How reliably imagery follows the cue" />
      </fieldset>
      <fieldset className="grid grid-cols-2 gap-3 md:grid-cols-4">
        <legend className="mb-2 text-sm font-bold">Artifacts</legend>
        <NumberField name="blinksPerMinute" label="Blinks / min" value={s.blinksPerMinute} min={0} errors={errors} />
        <NumberField name="muscleBurstsPerMinute" label="Muscle bursts / min" value={s.muscleBurstsPerMinute} min={0} errors={errors} />
        <div>
          <label className="label" htmlFor="bench-mainsHz">
            Mains
          </label>
          <select id="bench-mainsHz" name="mainsHz" defaultValue={String(s.mainsHz)} className="field py-1">
            <option value="0">none</option>
            <option value="50">50 Hz</option>
            <option value="60">60 Hz</option>
          </select>
        </div>
        <NumberField name="mainsUv" label="Mains amplitude (µV)" value={s.mainsUv} min={0} errors={errors} />
        <div className="col-span-2">
          <label className="label" htmlFor="bench-flat">
            Flat channels
          </label>
          <input id="bench-flat" name="flatChannels" defaultValue={s.flatChannels.join(', ')} placeholder="e.g. O1" className="field py-1" />
        </div>
        <div className="col-span-2">
          <label className="label" htmlFor="bench-noisy">
            Noisy channels
          </label>
          <input id="bench-noisy" name="noisyChannels" defaultValue={s.noisyChannels.join(', ')} placeholder="e.g. T7, FC5" className="field py-1" />
        </div>
      </fieldset>
      <fieldset className="grid grid-cols-2 gap-3 md:grid-cols-4">
        <legend className="mb-2 text-sm font-bold">Link faults (continuous)</legend>
        <NumberField name="jitterMs" label="Jitter (ms)" value={s.jitterMs} min={0} errors={errors} />
        <NumberField name="dropRate" label="Drop rate" value={s.dropRate} step={0.01} min={0} max={1} errors={errors} hint="per block, 0–1" />
        <NumberField name="reorderRate" label="Reorder rate" value={s.reorderRate} step={0.01} min={0} max={1} errors={errors} />
        <NumberField name="duplicateRate" label="Duplicate rate" value={s.duplicateRate} step={0.01} min={0} max={1} errors={errors} />
        <NumberField name="nanRate" label="NaN rate" value={s.nanRate} step={0.01} min={0} max={1} errors={errors} />
        <NumberField name="disconnectEverySeconds" label="Disconnect every (s)" value={s.disconnectEverySeconds} min={0} errors={errors} hint="0: never" />
      </fieldset>
    </>
  )
}

export default function Bench({ loaderData, actionData }: Route.ComponentProps) {
  const { sessions, selected, status } = loaderData
  const errors: Errors = (actionData && 'errors' in actionData ? actionData.errors : undefined) ?? {}
  const ok = actionData && 'ok' in actionData ? actionData.ok : null
  const busy = useNavigation().state !== 'idle'
  const [, setParams] = useSearchParams()
  const revalidator = useRevalidator()
  const running = !!status

  // While a device runs, its counters and fault log refresh every two seconds.
  useEffect(() => {
    if (!running) return
    const t = setInterval(() => {
      if (revalidator.state === 'idle' && document.visibilityState === 'visible') void revalidator.revalidate()
    }, 2000)
    return () => clearInterval(t)
  }, [running, revalidator])

  return (
    <div className="max-w-6xl">
      <PageHeader title="Bench" lead="Attach a simulated participant to a session as a device link, change how it behaves while it streams, and watch what the server makes of it." />
      {sessions.length === 0 ? (
        <p className="panel text-haze">No planned or live session in the lab. An operator prepares one first.</p>
      ) : (
        <div className="space-y-6">
          <section className="panel">
            <label className="label" htmlFor="bench-session">
              Session
            </label>
            <select id="bench-session" className="field" value={selected?.id ?? ''} onChange={(e) => setParams({ session: e.target.value })}>
              {sessions.map((s) => (
                <option key={s.id} value={s.id}>
                  {s.participant} · {s.protocol} · {s.montage} · {s.status}
                  {s.running ? ' · simulator attached' : ''}
                </option>
              ))}
            </select>
            {selected ? (
              <p className="mt-2 text-sm text-haze">
                <Link className="underline" to={`/sessions/${selected.id}`}>
                  Session page
                </Link>{' '}
                ·{' '}
                <Link className="underline" to={`/sessions/${selected.id}/console`}>
                  Console
                </Link>
              </p>
            ) : null}
          </section>

          {errors._form ? (
            <p role="alert" className="panel border-rust/60 text-rust">
              {errors._form[0]}
            </p>
          ) : null}
          {ok ? (
            <p role="status" className="text-sm text-sea">
              {ok}
            </p>
          ) : null}

          {selected && !running ? (
            <Form method="post" className="panel space-y-5" key={`start-${selected.id}`}>
              <input type="hidden" name="intent" value="start" />
              <input type="hidden" name="sessionId" value={selected.id} />
              <h2 className="font-bold">Start a simulated device</h2>
              <div className="grid grid-cols-2 gap-3 md:grid-cols-4">
                <div>
                  <label className="label" htmlFor="bench-rate">
                    Sample rate
                  </label>
                  <select id="bench-rate" name="rateHz" defaultValue="500" className="field py-1">
                    <option value="250">250 Hz</option>
                    <option value="500">500 Hz</option>
                    <option value="1000">1000 Hz</option>
                  </select>
                </div>
                <NumberField name="seed" label="Seed (optional)" value="" min={0} errors={errors} hint="The same seed gives the same participant" />
              </div>
              <SettingsFields s={DEFAULT_BENCH_SETTINGS} errors={errors} />
              <button type="submit" className="btn-primary" disabled={busy}>
                Start device
              </button>
            </Form>
          ) : null}

          {selected && status ? (
            <>
              <section className="panel" aria-labelledby="device-h">
                <div className="flex flex-wrap items-center justify-between gap-3">
                  <h2 id="device-h" className="font-bold">
                    Simulated device <StatusBadge status={status.state === 'streaming' ? 'running' : status.state === 'stopped' ? 'stopped' : 'paused'} label={status.state} />
                  </h2>
                  <Form method="post">
                    <input type="hidden" name="intent" value="stop" />
                    <input type="hidden" name="sessionId" value={selected.id} />
                    <button type="submit" className="btn-danger" disabled={busy}>
                      Stop device
                    </button>
                  </Form>
                </div>
                <dl className="mt-3 grid grid-cols-2 gap-3 text-sm md:grid-cols-4" data-testid="bench-stats">
                  {[
                    ['Channels · rate', `${status.channels} · ${status.rateHz} Hz`],
                    ['Blocks sent', status.stats.blocksSent.toLocaleString('en-GB')],
                    ['Cues received', String(status.stats.cuesReceived)],
                    ['Reconnects', String(status.stats.reconnects)],
                    ['Durable up to block', status.stats.lastAck ? String(status.stats.lastAck.durableSeq) : '—'],
                    ['Last close', status.stats.lastClose ? `${status.stats.lastClose.code} ${status.stats.lastClose.reason}` : '—'],
                    ['Seed', String(status.seed)],
                    ['Started', `${new Date(status.startedAt).toLocaleTimeString('en-GB')} by ${status.startedBy}`],
                  ].map(([k, v]) => (
                    <div key={k}>
                      <dt className="text-xs text-haze">{k}</dt>
                      <dd className="tabular-nums">{v}</dd>
                    </div>
                  ))}
                </dl>
              </section>
              <Form method="post" className="panel space-y-5" key={`update-${selected.id}-${status.startedAt}`}>
                <input type="hidden" name="intent" value="update" />
                <input type="hidden" name="sessionId" value={selected.id} />
                <h2 className="font-bold">Change while streaming</h2>
                <SettingsFields s={status.settings} errors={errors} />
                <button type="submit" className="btn-primary" disabled={busy}>
                  Apply
                </button>
              </Form>
              <section className="panel" aria-labelledby="inject-h">
                <h2 id="inject-h" className="font-bold">
                  One-off faults
                </h2>
                <p className="mt-1 text-sm text-haze">Each button affects the next block only (or drops the link now).</p>
                <div className="mt-3 flex flex-wrap gap-2">
                  {FAULT_KINDS.map((kind) => (
                    <Form method="post" key={kind}>
                      <input type="hidden" name="intent" value="inject" />
                      <input type="hidden" name="sessionId" value={selected.id} />
                      <input type="hidden" name="kind" value={kind} />
                      <button type="submit" className="btn-quiet" disabled={busy}>
                        {kind}
                      </button>
                    </Form>
                  ))}
                </div>
              </section>
              <section className="panel" aria-labelledby="log-h">
                <h2 id="log-h" className="font-bold">
                  Fault log
                </h2>
                {status.faultLog.length === 0 ? (
                  <p className="mt-2 text-sm text-haze">No faults so far.</p>
                ) : (
                  <table className="table-plain mt-2 font-mono text-xs" data-testid="fault-log">
                    <thead>
                      <tr>
                        <th>Time</th>
                        <th>Kind</th>
                        <th>Block</th>
                        <th>Detail</th>
                      </tr>
                    </thead>
                    <tbody>
                      {status.faultLog.map((f, i) => (
                        <tr key={`${f.at}-${i}`}>
                          <td>{new Date(f.at).toLocaleTimeString('en-GB')}</td>
                          <td>{f.kind}</td>
                          <td>{f.seq ?? '—'}</td>
                          <td>{f.detail}</td>
                        </tr>
                      ))}
                    </tbody>
                  </table>
                )}
              </section>
            </>
          ) : null}
        </div>
      )}
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
