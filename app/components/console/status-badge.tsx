// A small coloured label for a session's, run's or device link's state. Colour is never the
// only carrier: the word is always shown.
const TONE: Record<string, string> = {
  planned: 'border-sky/50 text-sky',
  live: 'border-sea/60 text-sea',
  ended: 'border-ink-600 text-haze',
  interrupted: 'border-rust/60 text-rust',
  imported: 'border-ink-600 text-haze',
  running: 'border-sea/60 text-sea',
  paused: 'border-brass/60 text-brass',
  stopped: 'border-ink-600 text-haze',
  completed: 'border-ink-600 text-fog',
  pending: 'border-ink-600 text-haze',
  active: 'border-sea/60 text-sea',
  revoked: 'border-ink-600 text-haze',
  expired: 'border-ink-600 text-haze',
}

export function StatusBadge({ status, label }: { status: string; label?: string }) {
  return (
    <span className={`inline-block rounded border px-2 py-0.5 text-xs font-medium uppercase tracking-wide ${TONE[status] ?? 'border-ink-600 text-haze'}`}>
      {label ?? status}
    </span>
  )
}
