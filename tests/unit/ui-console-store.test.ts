// The console's reducer and the states it shows. The state words are the product brief's
// ("no device", "device connected", "recording", "decoding", "paused", "stopped", "device lost").
import { describe, expect, it } from 'vitest'
import { allowedControls, applyOperatorEvent, consoleState, createConsoleStore, EVENT_LIMIT, initialConsoleData, NO_DEVICE } from '~/lib/console-store'
import type { DeviceInfo, LiveSnapshot, RunInfo } from '~/live/events'
import { SampleClock } from '~/components/console/sample-clock'

const connected: DeviceInfo = { state: 'connected', device: 'sim', channels: ['C3', 'C4'], rateHz: 500, connectedAt: '2026-01-01T00:00:00Z', reason: null }
const run = (over: Partial<RunInfo> = {}): RunInfo => ({
  id: 'r1', kind: 'calibration', index: 1, status: 'running', trialsDone: 0, trialsTotal: 10, hits: 0, misses: 0, timeouts: 0, startedAt: null, endedAt: null, decoderId: null, ...over,
})

describe('console state words', () => {
  it('follows the device link and the run', () => {
    expect(consoleState({ device: NO_DEVICE, run: null })).toBe('no device')
    expect(consoleState({ device: connected, run: null })).toBe('device connected')
    expect(consoleState({ device: connected, run: run() })).toBe('recording')
    expect(consoleState({ device: connected, run: run({ kind: 'feedback' }) })).toBe('decoding')
    expect(consoleState({ device: connected, run: run({ status: 'paused' }) })).toBe('paused')
    expect(consoleState({ device: connected, run: run({ status: 'completed' }) })).toBe('stopped')
    expect(consoleState({ device: connected, run: run({ status: 'stopped' }) })).toBe('stopped')
    expect(consoleState({ device: { ...connected, state: 'lost' }, run: run() })).toBe('device lost')
    // A run in progress whose link is gone is a lost device, not "no device".
    expect(consoleState({ device: NO_DEVICE, run: run() })).toBe('device lost')
  })

  it('offers only the controls the state allows', () => {
    const base = { device: connected, run: null, decoder: null, sessionStatus: 'live' }
    expect(allowedControls(base)).toMatchObject({ startCalibration: true, startFeedback: false, pause: false, stop: false })
    expect(allowedControls({ ...base, decoder: { id: 'd', version: 1, method: 'csp', classes: ['left', 'right'], cvAccuracy: 0.8 } }).startFeedback).toBe(true)
    expect(allowedControls({ ...base, run: run() })).toMatchObject({ startCalibration: false, pause: true, resume: false, stop: true, endSession: false })
    expect(allowedControls({ ...base, run: run({ status: 'paused' }) })).toMatchObject({ pause: false, resume: true, stop: true })
    expect(allowedControls({ ...base, device: NO_DEVICE }).startCalibration).toBe(false)
    expect(allowedControls({ ...base, sessionStatus: 'ended' })).toMatchObject({ startCalibration: false, endSession: false })
  })
})

describe('console reducer', () => {
  it('takes the whole state from a snapshot and deltas after it', () => {
    const snap: LiveSnapshot = {
      sessionId: 's', sessionStatus: 'live', device: connected, run: run(), cue: null, decoder: null,
      figures: { ...initialConsoleData().figures, blocksReceived: 12 }, classes: ['left', 'right'], montage: ['C3', 'C4'],
    }
    let s = applyOperatorEvent(initialConsoleData(), 'snapshot', snap)
    expect(consoleState(s)).toBe('recording')
    expect(s.figures.blocksReceived).toBe(12)
    s = applyOperatorEvent(s, 'run', run({ status: 'paused' }))
    expect(consoleState(s)).toBe('paused')
    s = applyOperatorEvent(s, 'device', { ...connected, state: 'lost', reason: 'link closed' })
    expect(consoleState(s)).toBe('device lost')
    s = applyOperatorEvent(s, 'quality', { channels: [{ name: 'C3', rmsUv: 12, state: 'good' }, { name: 'C4', rmsUv: 0, state: 'flat' }] })
    expect(s.quality.C4).toEqual({ state: 'flat', rmsUv: 0 })
  })

  it('keeps the event list bounded and annotations unique', () => {
    let s = initialConsoleData()
    for (let i = 0; i < EVENT_LIMIT + 50; i++) s = applyOperatorEvent(s, 'event', { kind: 'gap', at: new Date(i).toISOString(), sample: i, detail: {} })
    expect(s.events).toHaveLength(EVENT_LIMIT)
    expect(s.events[0].sample).toBe(EVENT_LIMIT + 49)
    const a = { id: 'a1', runId: null, sample: null, text: 'cap adjusted', authorName: 'T', createdAt: '2026-01-01T00:00:00Z' }
    s = applyOperatorEvent(applyOperatorEvent(s, 'annotation', a), 'annotation', a)
    expect(s.annotations).toHaveLength(1)
  })

  it('leaves state untouched for high-rate frames', () => {
    const s = initialConsoleData()
    expect(applyOperatorEvent(s, 'signal', { firstSample: 0, displayRateHz: 125, raw: [[1]], filtered: null })).toBe(s)
  })

  it('works as a zustand store', () => {
    const store = createConsoleStore({ classes: ['left', 'right'] })
    store.getState().apply('device', connected)
    store.getState().setView({ scaleUv: 100 })
    expect(store.getState().device.state).toBe('connected')
    expect(store.getState().view.scaleUv).toBe(100)
    expect(store.getState().classes).toEqual(['left', 'right'])
  })
})

describe('sample clock', () => {
  it('maps device samples to wall time and re-anchors only on a large jump', () => {
    const c = new SampleClock(500, 600)
    expect(c.observe(500, 10_000)).toBe(true) // first frame anchors: sample 500 at t = 10 s
    expect(c.timeOf(0, 0)).toBe(9_000)
    expect(c.observe(1000, 11_100)).toBe(false) // 100 ms late: within tolerance, no jump
    expect(c.timeOf(1000, 0)).toBe(11_000)
    expect(c.observe(0, 20_000)).toBe(true) // device restarted its clock
    expect(c.timeOf(0, 0)).toBe(20_000)
  })
})
