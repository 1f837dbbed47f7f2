// The console's state line and run controls. Every control is a POST to the live API; the
// buttons follow what the state allows, and the server checks again.
import { useState } from 'react'
import { allowedControls, consoleState, type ConsoleState } from '~/lib/console-store'
import { livePaths, postLive } from './live-client'
import { useConsole, useConsoleApi } from './console-context'

const STATE_STYLE: Record<ConsoleState, { cls: string; note: string }> = {
  'no device': { cls: 'border-ink-600 text-haze', note: 'Connect the amplifier bridge or the simulator with a device token.' },
  'device connected': { cls: 'border-sky text-sky', note: 'Streaming; nothing recorded. Check signal quality, then start a run.' },
  recording: { cls: 'border-rust text-rust', note: 'Calibration run: cues shown, samples recorded.' },
  decoding: { cls: 'border-sea text-sea', note: 'Feedback run: every block decoded, every decision logged.' },
  paused: { cls: 'border-brass text-brass', note: 'Paused: cues held, samples still recorded.' },
  stopped: { cls: 'border-ink-600 text-fog', note: 'The last run has ended and its record is complete.' },
  'device lost': { cls: 'border-rust bg-rust/15 text-rust', note: 'The device link dropped. It can reconnect and continue the run.' },
}

export function StatePill({ state }: { state: ConsoleState }) {
  return (
    <span data-testid="console-state" className={`inline-flex items-center gap-2 rounded-md border-2 px-3 py-1 text-sm font-bold uppercase tracking-wider ${STATE_STYLE[state].cls}`}>
      <svg viewBox="0 0 10 10" className="h-2.5 w-2.5" aria-hidden="true">
        {state === 'paused' ? <path d="M2 1h2v8H2zM6 1h2v8H6z" fill="currentColor" /> : state === 'stopped' || state === 'no device' ? <rect x="1.5" y="1.5" width="7" height="7" fill="currentColor" /> : <circle cx="5" cy="5" r="4" fill="currentColor" />}
      </svg>
      {state}
    </span>
  )
}

export function RunControls({ defaultTrialsPerClass, canControl }: { defaultTrialsPerClass: number; canControl: boolean }) {
  const { sessionId } = useConsoleApi()
  const device = useConsole((s) => s.device)
  const run = useConsole((s) => s.run)
  const decoder = useConsole((s) => s.decoder)
  const sessionStatus = useConsole((s) => s.sessionStatus)
  const stream = useConsole((s) => s.stream)
  const state = consoleState({ device, run })
  const allow = allowedControls({ device, run, decoder, sessionStatus })
  const [trialsPerClass, setTrialsPerClass] = useState(defaultTrialsPerClass)
  const [busy, setBusy] = useState(false)
  const [error, setError] = useState<string | null>(null)

  const send = async (fields: Record<string, string | number>) => {
    setBusy(true)
    setError(null)
    const reply = await postLive(livePaths.runs(sessionId), fields)
    setBusy(false)
    if (!reply.ok) setError(reply.message)
  }
  const ended = sessionStatus === 'ended'

  return (
    <section aria-label="Run controls" className="panel flex flex-col gap-3 p-3">
      <div className="flex flex-wrap items-center gap-3">
        <StatePill state={ended ? 'stopped' : state} />
        <span className="text-sm text-haze">{ended ? 'The session has ended.' : STATE_STYLE[state].note}</span>
        {device.state === 'connected' ? (
          <span className="text-xs text-haze">
            {device.device ?? 'device'} · {device.channels.length} ch · {device.rateHz} Hz
          </span>
        ) : device.reason ? (
          <span className="text-xs text-rust">last link: {device.reason}</span>
        ) : null}
        {stream !== 'open' ? (
          <span role="status" className="ml-auto rounded bg-brass/15 px-2 py-0.5 text-xs text-brass">
            {stream === 'connecting' ? 'Connecting to the server…' : 'Connection to the server lost; reconnecting…'}
          </span>
        ) : null}
      </div>
      {run ? (
        <p className="text-sm" data-testid="run-line">
          Run {run.index} · {run.kind} · {run.status} · trial {Math.min(run.trialsDone + (run.status === 'running' ? 1 : 0), run.trialsTotal)} of {run.trialsTotal}
        </p>
      ) : null}
      {canControl ? null : <p className="text-sm text-haze">You are watching: run controls are the operator's.</p>}
      <div className={`flex flex-wrap items-end gap-2 ${canControl ? '' : 'hidden'}`}>
        <label className="text-xs text-haze">
          Trials per class
          <input
            type="number"
            min={1}
            max={200}
            value={trialsPerClass}
            onChange={(e) => setTrialsPerClass(Math.max(1, Math.min(200, Number(e.target.value) || 1)))}
            className="field mt-1 w-20 py-1"
          />
        </label>
        <button type="button" className="btn-primary disabled:bg-ink-700 disabled:text-haze disabled:opacity-100" disabled={busy || !allow.startCalibration} onClick={() => send({ intent: 'start', kind: 'calibration', trialsPerClass })}>
          Start calibration
        </button>
        <button
          type="button"
          className="btn-primary"
          disabled={busy || !allow.startFeedback}
          title={decoder ? undefined : 'Activate a decoder first'}
          onClick={() => send({ intent: 'start', kind: 'feedback', trialsPerClass })}
        >
          Start feedback
        </button>
        <button type="button" className="btn-quiet" disabled={busy || !allow.pause} onClick={() => send({ intent: 'pause' })}>
          Pause
        </button>
        <button type="button" className="btn-quiet" disabled={busy || !allow.resume} onClick={() => send({ intent: 'resume' })}>
          Resume
        </button>
        <button type="button" className="btn-danger" disabled={busy || !allow.stop} onClick={() => send({ intent: 'stop' })}>
          Stop run
        </button>
        <button
          type="button"
          className="btn-danger ml-auto"
          disabled={busy || !allow.endSession}
          onClick={() => {
            if (window.confirm('End the session? No further runs can be started in it.')) void send({ intent: 'end-session' })
          }}
        >
          End session
        </button>
      </div>
      {error ? (
        <p role="alert" className="text-sm text-rust">
          {error}
        </p>
      ) : null}
    </section>
  )
}
