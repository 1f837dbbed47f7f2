// The feedback view's state machine and palette. Contrast uses the WCAG 2.x relative
// luminance and contrast-ratio definitions; 7:1 is the enhanced level (WCAG 1.4.6).
import { describe, expect, it } from 'vitest'
import { INITIAL_FEEDBACK, reduceFeedback, screenKey, screenOf, type FeedbackAction } from '~/components/feedback/feedback-state'
import { glyphKind } from '~/components/feedback/cue-glyph'
import { contrastRatio, FEEDBACK_PALETTE, relativeLuminance } from '~/components/feedback/palette'
import type { RunInfo } from '~/live/events'

const run = (over: Partial<RunInfo> = {}): RunInfo => ({
  id: 'r1', kind: 'feedback', index: 2, status: 'running', trialsDone: 0, trialsTotal: 10, hits: 0, misses: 0, timeouts: 0, startedAt: null, endedAt: null, decoderId: 'd1', ...over,
})

const play = (actions: FeedbackAction[]) => actions.reduce(reduceFeedback, INITIAL_FEEDBACK)

describe('feedback view state', () => {
  it('walks through the phases of a trial', () => {
    let s = play([{ name: 'snapshot', data: { sessionId: 's', run: null, cue: null, classes: ['left', 'right'] } }])
    expect(screenOf(s)).toBe('waiting')
    s = reduceFeedback(s, { name: 'run', data: run() })
    expect(screenOf(s)).toBe('fixation')
    for (const phase of ['fixation', 'cue', 'imagery', 'rest'] as const) {
      s = reduceFeedback(s, { name: 'cue', data: { runId: 'r1', trial: 0, label: 'left', phase, atSample: 0, durationMs: 1000 } })
      expect(screenOf(s)).toBe(phase)
    }
    s = reduceFeedback(s, { name: 'run', data: run({ status: 'paused' }) })
    expect(screenOf(s)).toBe('break')
    s = reduceFeedback(s, { name: 'run', data: run({ status: 'completed', hits: 7, misses: 3 }) })
    expect(screenOf(s)).toBe('summary')
  })

  it('uses the control signal only during imagery of the current run, clamped to [-1, 1]', () => {
    let s = play([
      { name: 'run', data: run() },
      { name: 'cue', data: { runId: 'r1', trial: 0, label: 'right', phase: 'cue', atSample: 0, durationMs: 1000 } },
      { name: 'feedback', data: { runId: 'r1', trial: 0, control: 0.4, className: 'right', probability: 0.7 } },
    ])
    expect(s.control).toBeNull()
    s = reduceFeedback(s, { name: 'cue', data: { runId: 'r1', trial: 0, label: 'right', phase: 'imagery', atSample: 500, durationMs: 4000 } })
    s = reduceFeedback(s, { name: 'feedback', data: { runId: 'r1', trial: 0, control: 3, className: 'right', probability: 0.9 } })
    expect(s.control).toBe(1)
    s = reduceFeedback(s, { name: 'cue', data: { runId: 'r1', trial: 1, label: 'left', phase: 'fixation', atSample: 3000, durationMs: 2000 } })
    expect(s.control).toBeNull()
  })

  it('gives one screen key per large-area state, so the flash guard sees every change', () => {
    const base = { run: run(), cue: { runId: 'r1', trial: 0, label: 'left', phase: 'cue' as const, atSample: 0, durationMs: 1 } }
    expect(screenKey(base)).toBe('cue:left')
    expect(screenKey({ ...base, cue: { ...base.cue, label: 'right' } })).toBe('cue:right')
    expect(screenKey({ ...base, cue: { ...base.cue, phase: 'rest' } })).toBe('rest')
  })

  it('draws a glyph of its own for each usual class name', () => {
    expect(glyphKind('left')).toBe('left')
    expect(glyphKind('Right hand')).toBe('right')
    expect(glyphKind('feet')).toBe('feet')
    expect(glyphKind('both hands')).toBe('both')
    expect(glyphKind('tongue')).toBe('other')
  })
})

describe('feedback palette contrast (WCAG 2.x formula)', () => {
  it('computes the known extremes: white on black is 21:1', () => {
    // WCAG 2.x: relative luminance of white is 1, of black 0; ratio (1.05 / 0.05) = 21.
    expect(relativeLuminance('#ffffff')).toBeCloseTo(1, 10)
    expect(relativeLuminance('#000000')).toBe(0)
    expect(contrastRatio('#ffffff', '#000000')).toBeCloseTo(21, 10)
  })
  it('holds text, glyphs and the marker at 7:1 or more against the background', () => {
    const bg = FEEDBACK_PALETTE.background
    for (const fg of [FEEDBACK_PALETTE.ink, FEEDBACK_PALETTE.soft, FEEDBACK_PALETTE.target, FEEDBACK_PALETTE.marker]) expect(contrastRatio(fg, bg)).toBeGreaterThanOrEqual(7)
  })
  it('keeps the marker visible on the track (3:1, WCAG 1.4.11 non-text contrast)', () => {
    expect(contrastRatio(FEEDBACK_PALETTE.marker, FEEDBACK_PALETTE.track)).toBeGreaterThanOrEqual(3)
  })
})
