// WCAG 2.3.1 (Three Flashes or Below Threshold): nothing on the participant's screen may
// flash more than three times in any one-second period. A flash is a pair of opposing
// luminance changes, so limiting *every* large-area change to at most three in any second
// keeps the view at or below one and a half flashes a second, with margin.
//
// Every change of what fills a large part of the screen (the phase screen: fixation, cue
// glyph, rest, break, summary) goes through this guard. A change asked for too soon is held
// and shown at the earliest allowed moment; if more changes arrive meanwhile, only the latest
// is shown (the participant sees the current state, never a burst of stale ones).

export const MAX_CHANGES_PER_SECOND = 3
/** Spacing that keeps any one-second window at MAX_CHANGES_PER_SECOND changes or fewer. */
export const MIN_CHANGE_SPACING_MS = Math.ceil(1000 / MAX_CHANGES_PER_SECOND) + 1

export interface FlashGuard<T> {
  /** Ask for a new screen state; returns true if it was shown at once. */
  request(next: T): boolean
  readonly current: T
  /** Times (ms) at which shown changes happened, newest last; for tests and the debug line. */
  readonly history: readonly number[]
  dispose(): void
}

export interface FlashGuardDeps {
  now(): number
  setTimer(fn: () => void, ms: number): unknown
  clearTimer(handle: unknown): void
}

const realDeps: FlashGuardDeps = {
  now: () => performance.now(),
  setTimer: (fn, ms) => setTimeout(fn, ms),
  clearTimer: (h) => clearTimeout(h as ReturnType<typeof setTimeout>),
}

export function createFlashGuard<T>(initial: T, onShow: (value: T) => void, same: (a: T, b: T) => boolean = Object.is, deps: FlashGuardDeps = realDeps): FlashGuard<T> {
  let current = initial
  let pending: { value: T } | null = null
  let timer: unknown = null
  const history: number[] = []
  let lastChange = Number.NEGATIVE_INFINITY

  const show = (value: T) => {
    current = value
    lastChange = deps.now()
    history.push(lastChange)
    if (history.length > 64) history.shift()
    onShow(value)
  }

  const flush = () => {
    timer = null
    if (!pending) return
    const { value } = pending
    pending = null
    if (!same(value, current)) show(value)
  }

  return {
    request(next) {
      if (same(next, current) && !pending) return false
      const wait = lastChange + MIN_CHANGE_SPACING_MS - deps.now()
      if (wait <= 0 && timer === null) {
        pending = null
        if (same(next, current)) return false
        show(next)
        return true
      }
      pending = { value: next }
      if (timer === null) timer = deps.setTimer(flush, Math.max(0, wait))
      return false
    },
    get current() {
      return current
    },
    get history() {
      return history
    },
    dispose() {
      if (timer !== null) deps.clearTimer(timer)
      timer = null
      pending = null
    },
  }
}

/** Largest number of changes in any window of `windowMs` (for tests and self-checks). */
export function maxChangesInWindow(times: readonly number[], windowMs = 1000): number {
  let best = 0
  let start = 0
  for (let end = 0; end < times.length; end++) {
    while (times[end] - times[start] >= windowMs) start++
    best = Math.max(best, end - start + 1)
  }
  return best
}
