// Device and run events as they happen: links, gaps, protocol refusals, markers, trial outcomes.
import { useConsole } from './console-context'

const WORDS: Record<string, string> = {
  device_connected: 'device connected',
  device_disconnected: 'device disconnected',
}

function describe(detail: Record<string, unknown>): string {
  return Object.entries(detail)
    .filter(([, v]) => v !== null && v !== undefined && typeof v !== 'object')
    .map(([k, v]) => `${k} ${String(v)}`)
    .join(' · ')
}

export function EventsPanel() {
  const events = useConsole((s) => s.events)
  const trials = useConsole((s) => s.trials)
  return (
    <section aria-labelledby="events-h" className="panel p-3">
      <h2 id="events-h" className="mb-2 text-sm font-bold">
        Events
      </h2>
      {trials.length ? (
        <ol className="mb-2 flex flex-wrap gap-1" aria-label="Recent trial outcomes">
          {trials.slice(0, 40).map((t) => (
            <li
              key={`${t.runId}-${t.index}`}
              title={`trial ${t.index + 1}: ${t.label} → ${t.outcome}${t.decidedClass ? ` (${t.decidedClass})` : ''}`}
              className={`rounded px-1.5 text-xs ${t.outcome === 'hit' ? 'bg-sea/20 text-sea' : t.outcome === 'miss' ? 'bg-rust/20 text-rust' : t.outcome === 'timeout' ? 'bg-brass/20 text-brass' : 'bg-ink-700 text-haze'}`}
            >
              {t.outcome === 'hit' ? '✓' : t.outcome === 'miss' ? '✗' : t.outcome === 'timeout' ? '…' : '·'} {t.label}
            </li>
          ))}
        </ol>
      ) : null}
      <ol className="max-h-48 space-y-1 overflow-y-auto font-mono text-xs" data-testid="events">
        {events.length === 0 ? <li className="text-haze">Nothing yet.</li> : null}
        {events.map((e, i) => (
          <li key={`${e.at}-${i}`}>
            <span className="text-haze">{new Date(e.at).toLocaleTimeString('en-GB')}</span> <span className="text-fog">{WORDS[e.kind] ?? e.kind.replace(/_/g, ' ')}</span>{' '}
            <span className="text-haze">{describe(e.detail)}</span>
          </li>
        ))}
      </ol>
    </section>
  )
}
