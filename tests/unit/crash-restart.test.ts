// Crash and restart, short version for `npm test` (the long one is `npm run soak`): the live
// server on a PGlite data directory is SIGKILLed at random moments of calibration and feedback
// runs, 3 times, and restarted; then stopped cleanly with SIGTERM mid-run. What must hold is
// listed in scripts/crash-cycle.ts: the database opens, nothing is corrupt, every decision
// acknowledged as durable is present, the interrupted run says so, the device reconnects, and
// a clean stop loses nothing.
import { describe, expect, it } from 'vitest'
import { runCrashCycles } from '../../scripts/crash-cycle'

describe('crash and restart', () => {
  it('survives 3 SIGKILLs during runs and a clean SIGTERM, losing nothing acknowledged', async () => {
    const lines: string[] = []
    const report = await runCrashCycles({ dir: 'tmp/crash-test', port: 4630, kills: 3, seed: 42, log: (l) => lines.push(l) })
    console.log(lines.join('\n'))
    console.log('crash-restart figures', JSON.stringify({ kills: report.kills, survived: report.survived, ackedSamples: report.acked, restartMs: report.restartMs.map(Math.round), cleanStop: report.cleanStop }))
    expect(report.problems).toEqual([])
    expect(report.kills).toBe(3)
    expect(report.survived).toBe(3)
    // Each kill came after at least one durable acknowledgement, so the check had something to find.
    expect(report.acked.every((n) => n > 0)).toBe(true)
    expect(report.cleanStop.problems).toEqual([])
    expect(report.cleanStop.made).toBeGreaterThan(0)
    expect(report.cleanStop.logged).toBe(report.cleanStop.made)
  }, 240_000)
})
