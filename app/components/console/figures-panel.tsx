// Live figures of the session: trials, running accuracy, decision latency and the health of
// the device link (gaps, duplicates, reordering), plus decisions made versus logged.
import { useConsole } from './console-context'

const ms = (v: number | null) => (v === null ? '—' : `${v < 10 ? v.toFixed(2) : v.toFixed(1)} ms`)

export function FiguresPanel() {
  const f = useConsole((s) => s.figures)
  const lag = useConsole((s) => s.lagDropped)
  const run = useConsole((s) => s.run)
  const rows: [string, string, string?][] = [
    ['Trials done', `${f.trialsDone} / ${f.trialsTotal || '—'}`],
    ['Running accuracy', f.accuracy === null ? '—' : `${(f.accuracy * 100).toFixed(0)} %`, run?.kind === 'feedback' ? `${run.hits} hit · ${run.misses} miss · ${run.timeouts} timeout` : undefined],
    ['Decision latency median', ms(f.latencyP50Ms)],
    ['Decision latency p99', ms(f.latencyP99Ms)],
    ['Blocks received', f.blocksReceived.toLocaleString('en-GB')],
    ['Dropped blocks (gaps)', String(f.sequenceGaps)],
    ['Late (reordered) · duplicate', `${f.reordered} · ${f.duplicates}`],
    ['Decisions made · logged', `${f.decisionsMade.toLocaleString('en-GB')} · ${f.decisionsLogged.toLocaleString('en-GB')}`],
  ]
  return (
    <section aria-labelledby="figures-h" className="panel p-3">
      <h2 id="figures-h" className="mb-2 text-sm font-bold">
        Live figures
      </h2>
      <dl className="grid grid-cols-2 gap-x-3 gap-y-2 text-sm" data-testid="live-figures">
        {rows.map(([label, value, note]) => (
          <div key={label}>
            <dt className="text-xs text-haze">{label}</dt>
            <dd className="font-medium tabular-nums" data-figure={label}>
              {value}
              {note ? <span className="block text-xs font-normal text-haze">{note}</span> : null}
            </dd>
          </div>
        ))}
      </dl>
      {lag > 0 ? <p className="mt-2 text-xs text-brass">This screen fell behind and skipped {lag} display frames; decoding and the log are unaffected.</p> : null}
    </section>
  )
}
