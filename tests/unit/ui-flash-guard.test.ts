// The participant's screen may not flash more than three times in any one-second period
// (WCAG 2.3.1, Three Flashes or Below Threshold). The guard limits every large-area change
// to three per second, which is stricter (a flash is a pair of opposing changes).
import { describe, expect, it } from 'vitest'
import { createFlashGuard, MAX_CHANGES_PER_SECOND, maxChangesInWindow, MIN_CHANGE_SPACING_MS, type FlashGuardDeps } from '~/components/feedback/flash-guard'

function fakeClock() {
  let t = 0
  const timers: { at: number; fn: () => void; id: number }[] = []
  let next = 1
  const deps: FlashGuardDeps = {
    now: () => t,
    setTimer: (fn, ms) => {
      const id = next++
      timers.push({ at: t + ms, fn, id })
      return id
    },
    clearTimer: (id) => {
      const i = timers.findIndex((x) => x.id === id)
      if (i >= 0) timers.splice(i, 1)
    },
  }
  const advance = (ms: number) => {
    const end = t + ms
    for (;;) {
      timers.sort((a, b) => a.at - b.at)
      const due = timers[0]
      if (!due || due.at > end) break
      timers.shift()
      t = due.at
      due.fn()
    }
    t = end
  }
  return { deps, advance, now: () => t }
}

describe('flash guard (WCAG 2.3.1)', () => {
  it('lets a change through at once when the screen has been still', () => {
    const c = fakeClock()
    const shown: string[] = []
    const g = createFlashGuard<string>('a', (v) => shown.push(v), Object.is, c.deps)
    expect(g.request('b')).toBe(true)
    expect(shown).toEqual(['b'])
  })

  it('never shows more than three changes in any one-second window, whatever is asked', () => {
    const c = fakeClock()
    const times: number[] = []
    const g = createFlashGuard<number>(0, () => times.push(c.now()), Object.is, c.deps)
    // 60 changes a second for three seconds: an alternating screen would flash 30 times a second.
    for (let i = 1; i <= 180; i++) {
      g.request(i % 2)
      c.advance(1000 / 60)
    }
    c.advance(1000)
    expect(maxChangesInWindow(times, 1000)).toBeLessThanOrEqual(MAX_CHANGES_PER_SECOND)
    // consecutive changes are at least the minimum spacing apart
    for (let i = 1; i < times.length; i++) expect(times[i] - times[i - 1]).toBeGreaterThanOrEqual(MIN_CHANGE_SPACING_MS)
  })

  it('shows the latest state after a burst, not a queue of stale ones', () => {
    const c = fakeClock()
    const shown: string[] = []
    const g = createFlashGuard<string>('waiting', (v) => shown.push(v), Object.is, c.deps)
    g.request('fixation')
    c.advance(10)
    g.request('cue:left')
    g.request('imagery:left')
    g.request('rest')
    c.advance(MIN_CHANGE_SPACING_MS)
    expect(shown).toEqual(['fixation', 'rest'])
    expect(g.current).toBe('rest')
  })

  it('drops a held change when the screen goes back to what is shown', () => {
    const c = fakeClock()
    const shown: string[] = []
    const g = createFlashGuard<string>('a', (v) => shown.push(v), Object.is, c.deps)
    g.request('b')
    g.request('c')
    g.request('b')
    c.advance(1000)
    expect(shown).toEqual(['b'])
  })

  it('counts windows correctly', () => {
    expect(maxChangesInWindow([0, 100, 200, 300])).toBe(4)
    expect(maxChangesInWindow([0, 334, 668, 1002, 1336])).toBe(3)
    expect(maxChangesInWindow([])).toBe(0)
  })
})
