// The participant's feedback view: one calm full screen at a time (waiting, fixation, cue,
// imagery with the feedback track, rest, break, end-of-run summary), dark ink on paper, large
// type for reading from two metres. Every change of screen passes the flash guard (WCAG 2.3.1).
import { useEffect, useReducer, useRef, useState } from 'react'
import { FEEDBACK_EVENT_NAMES, type FeedbackEvents } from '~/live/events'
import { useEventSource } from '~/components/console/use-event-source'
import { CueGlyph, FixationMark } from './cue-glyph'
import { FeedbackTrack } from './feedback-track'
import { INITIAL_FEEDBACK, reduceFeedback, screenKey, screenOf, type FeedbackAction, type FeedbackViewState } from './feedback-state'
import { createFlashGuard, type FlashGuard } from './flash-guard'
import { FEEDBACK_PALETTE as P } from './palette'
import { useReducedMotion } from './reduced-motion'

interface Shown {
  key: string
  state: Pick<FeedbackViewState, 'run' | 'cue' | 'lastTrial'>
}

function Big({ children }: { children: React.ReactNode }) {
  return <p className="text-center text-[7vmin] leading-tight font-bold">{children}</p>
}
function Small({ children }: { children: React.ReactNode }) {
  return <p className="mt-[3vmin] text-center text-[3.6vmin] leading-snug" style={{ color: P.soft }}>{children}</p>
}

function ScreenBody({ shown, live, reducedMotion }: { shown: Shown; live: FeedbackViewState; reducedMotion: boolean }) {
  const { run, cue, lastTrial } = shown.state
  const screen = screenOf(shown.state)
  switch (screen) {
    case 'waiting':
      return (
        <>
          <Big>Welcome</Big>
          <Small>The session will begin when the operator starts a run. Sit comfortably and relax your hands.</Small>
        </>
      )
    case 'fixation':
      return (
        <>
          <FixationMark />
          <Small>Look at the centre.</Small>
        </>
      )
    case 'cue':
    case 'imagery': {
      const label = cue?.label ?? ''
      const feedback = run?.kind === 'feedback' && screen === 'imagery'
      return (
        <div className="flex w-full flex-col items-center gap-[4vmin]">
          <CueGlyph label={label} size={feedback ? '30vmin' : '42vmin'} />
          <p className="text-[5vmin] font-bold">Imagine moving: {label}</p>
          {feedback ? <FeedbackTrack control={live.control} classes={live.classes} target={label} reducedMotion={reducedMotion} /> : null}
        </div>
      )
    }
    case 'rest':
      return (
        <>
          <Big>Rest</Big>
          <Small>
            {run?.kind === 'feedback' && lastTrial && lastTrial.runId === run.id
              ? lastTrial.outcome === 'hit'
                ? 'That one reached the target.'
                : 'Let it go; the next one is new.'
              : 'Let your hands go loose. Blink if you need to.'}
          </Small>
        </>
      )
    case 'break':
      return (
        <>
          <Big>Break</Big>
          <Small>Take your time. The operator will continue when you are ready.</Small>
        </>
      )
    case 'summary': {
      const scored = run ? run.hits + run.misses + run.timeouts : 0
      return (
        <>
          <Big>Run finished</Big>
          {run?.kind === 'feedback' && scored > 0 ? (
            <p className="mt-[3vmin] text-center text-[5vmin]" data-testid="run-summary">
              {run.hits} of {scored} trials reached the target
            </p>
          ) : (
            <p className="mt-[3vmin] text-center text-[5vmin]" data-testid="run-summary">
              {run?.trialsDone ?? 0} trials done. Thank you.
            </p>
          )}
          <Small>Rest until the operator starts the next run.</Small>
        </>
      )
    }
  }
}

export function FeedbackScreen({ streamUrl }: { streamUrl: string }) {
  const [state, dispatch] = useReducer(reduceFeedback, INITIAL_FEEDBACK)
  const { reducedMotion, toggle, forced } = useReducedMotion()
  const [shown, setShown] = useState<Shown>({ key: 'waiting', state: INITIAL_FEEDBACK })
  const guard = useRef<FlashGuard<Shown> | null>(null)

  const handlers = Object.fromEntries(FEEDBACK_EVENT_NAMES.filter((n) => n !== 'lag').map((name) => [name, (data: unknown) => dispatch({ name, data } as FeedbackAction)]))
  const stream = useEventSource(streamUrl, handlers)

  useEffect(() => {
    const g = createFlashGuard<Shown>(
      { key: 'waiting', state: INITIAL_FEEDBACK },
      (value) => {
        setShown(value)
      },
      (a, b) => a.key === b.key,
    )
    guard.current = g
    return () => g.dispose()
  }, [])

  // Same screen, newer details (trial counts, outcome): update in place, no luminance change.
  useEffect(() => {
    const next: Shown = { key: screenKey(state), state: { run: state.run, cue: state.cue, lastTrial: state.lastTrial } }
    const g = guard.current
    if (!g) return
    // request() of the current key also cancels a change still held by the guard.
    g.request(next)
    if (g.current.key === next.key) setShown((s) => (s.key === next.key ? next : s))
  }, [state])

  return (
    <div
      className="relative flex min-h-screen flex-col items-center justify-center px-[5vw] select-none"
      style={{ background: P.background, color: P.ink }}
      data-testid="feedback-view"
      data-screen={shown.key}
    >
      <main className="flex w-full max-w-[120vmin] flex-col items-center" aria-live="polite">
        <ScreenBody shown={shown} live={state} reducedMotion={reducedMotion} />
      </main>
      <div className="absolute right-[2vw] bottom-[2vh] flex items-center gap-4 text-[2.2vmin]" style={{ color: P.soft }}>
        {stream !== 'open' ? <span role="status">{stream === 'connecting' ? 'Connecting…' : 'Reconnecting…'}</span> : null}
        <label className="flex items-center gap-2">
          <input type="checkbox" checked={reducedMotion} onChange={toggle} className="h-[2.4vmin] w-[2.4vmin]" disabled={forced} />
          Reduced motion{forced ? ' (set by this computer)' : ''}
        </label>
      </div>
    </div>
  )
}
