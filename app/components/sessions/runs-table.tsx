import type { SessionOverview } from '~/server/sessions.server'
import { StatusBadge } from '~/components/console/status-badge'

function duration(start: string | null, end: string | null): string {
  if (!start) return '—'
  const ms = (end ? new Date(end).getTime() : Date.now()) - new Date(start).getTime()
  const s = Math.max(0, Math.round(ms / 1000))
  return `${Math.floor(s / 60)} min ${s % 60} s`
}

export function RunsTable({ runs }: { runs: SessionOverview['runs'] }) {
  if (runs.length === 0) return <p className="text-sm text-haze">No runs yet. Start a calibration run from the console.</p>
  return (
    <table className="table-plain" data-testid="runs-table">
      <thead>
        <tr>
          <th>Run</th>
          <th>Kind</th>
          <th>Status</th>
          <th>Trials</th>
          <th>Accuracy</th>
          <th>Decisions logged</th>
          <th>Length</th>
        </tr>
      </thead>
      <tbody>
        {runs.map((r) => (
          <tr key={r.id} data-run-kind={r.kind} data-run-status={r.status} data-decisions={r.decisions}>
            <td className="tabular-nums">{r.index}</td>
            <td>{r.kind}</td>
            <td>
              <StatusBadge status={r.status} />
            </td>
            <td className="tabular-nums">{r.trials}</td>
            <td className="tabular-nums">{r.kind === 'feedback' && r.scored > 0 ? `${((r.hits / r.scored) * 100).toFixed(0)} % (${r.hits}/${r.scored})` : '—'}</td>
            <td className="tabular-nums">{r.decisions.toLocaleString('en-GB')}</td>
            <td>{duration(r.startedAt, r.endedAt)}</td>
          </tr>
        ))}
      </tbody>
    </table>
  )
}
