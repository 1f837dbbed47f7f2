// The feedback indicator: a broad horizontal track with the two classes at its ends and a
// marker driven by the decoder's control signal. The marker glides (critically damped, about
// 150 ms) by writing its transform directly, once per animation frame, without React renders.
// With reduced motion it does not glide: it steps to the latest value at most four times a second.
import { useEffect, useRef } from 'react'
import { FEEDBACK_PALETTE as P } from './palette'

export const REDUCED_MOTION_UPDATE_MS = 250
const TIME_CONSTANT_MS = 150

export function FeedbackTrack({ control, classes, target, reducedMotion }: { control: number | null; classes: string[]; target: string | null; reducedMotion: boolean }) {
  const marker = useRef<HTMLDivElement>(null)
  const goal = useRef(0)
  goal.current = control ?? 0

  useEffect(() => {
    const el = marker.current
    if (!el) return
    let shown = 0
    let raf = 0
    let last = performance.now()
    let timer: ReturnType<typeof setInterval> | null = null
    const place = (v: number) => {
      el.style.left = `${50 + v * 45}%`
      el.dataset.position = v.toFixed(3)
    }
    if (reducedMotion) {
      timer = setInterval(() => {
        shown = goal.current
        place(shown)
      }, REDUCED_MOTION_UPDATE_MS)
      place(goal.current)
    } else {
      const tick = (now: number) => {
        const dt = Math.min(100, now - last)
        last = now
        shown += (goal.current - shown) * (1 - Math.exp(-dt / TIME_CONSTANT_MS))
        place(shown)
        raf = requestAnimationFrame(tick)
      }
      raf = requestAnimationFrame(tick)
    }
    return () => {
      cancelAnimationFrame(raf)
      if (timer) clearInterval(timer)
    }
  }, [reducedMotion])

  const [a, b] = classes
  const end = (label: string | undefined, side: 'left' | 'right') => {
    const isTarget = !!label && label === target
    return (
      <div className={`flex w-[18vw] flex-col items-center ${side === 'left' ? 'order-first' : 'order-last'}`}>
        <span className="text-[4.5vmin] font-bold" style={{ color: isTarget ? P.target : P.soft, textDecoration: isTarget ? 'underline' : 'none', textUnderlineOffset: '0.25em' }}>
          {label ?? ''}
        </span>
        {isTarget ? <span className="text-[3vmin]" style={{ color: P.soft }}>target</span> : null}
      </div>
    )
  }
  // With two classes, classes[0] sits at the left end (negative control) and classes[1] at the right.
  const targetSide = target ? (target === a ? 'left' : target === b ? 'right' : null) : null
  return (
    <div className="flex w-full items-center gap-[2vw]" data-testid="feedback-track" aria-label={`Feedback: ${a ?? ''} to the left, ${b ?? ''} to the right`}>
      {end(a, 'left')}
      <div className="relative h-[9vmin] flex-1 rounded-full" style={{ background: P.track }}>
        {targetSide ? (
          <div className="absolute top-0 h-full w-[22%] rounded-full" style={{ [targetSide]: 0, background: `${P.target}33`, border: `0.6vmin solid ${P.target}` }} aria-hidden="true" />
        ) : null}
        <div className="absolute top-1/2 left-1/2 h-[3vmin] w-[0.5vmin] -translate-x-1/2 -translate-y-1/2" style={{ background: P.soft }} aria-hidden="true" />
        <div
          ref={marker}
          data-testid="feedback-marker"
          className="absolute top-1/2 h-[11vmin] w-[11vmin] -translate-x-1/2 -translate-y-1/2 rounded-full"
          style={{ left: '50%', background: P.marker, boxShadow: `0 0 0 1vmin ${P.background}` }}
        />
      </div>
      {end(b, 'right')}
    </div>
  )
}
