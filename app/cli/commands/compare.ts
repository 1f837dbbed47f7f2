// `tiller compare <recording>`: cross-validates every spatial-filter method on the same trials
// and folds, so the operator can pick one with evidence.
import { ENGINE_OPTIONS_HELP, parseEngineArgs } from '~/engine/cli-options'
import { compareMethods } from '~/engine/decoder'
import { loadRecording, positionsForRecording } from './train'

export const summary = 'compare spatial-filter methods on a recording by cross-validated accuracy'

const USAGE = `usage: tiller compare <recording> [--methods csp,car,...] [--band 8-30] [--window 0.5-2.5] [--classes a,b] [--folds 5] [--json]
${ENGINE_OPTIONS_HELP}
  --methods a,b      methods to compare (default: all)`

export async function run(args: string[]): Promise<number> {
  const parsed = parseEngineArgs(args, 'compare')
  if (parsed.help) {
    console.log(USAGE)
    return 0
  }
  const recording = loadRecording(parsed.file, parsed.cueLabels)
  const positions = positionsForRecording(recording, parsed.montageFile)
  const rows = compareMethods(recording, { ...parsed.options, positions, methods: parsed.methods })
  const ok = rows.filter((r) => r.accuracy !== null)
  const chance = ok[0]?.chanceLevel ?? null
  if (parsed.json) {
    console.log(JSON.stringify({ recording: parsed.file, channels: recording.channels, band: parsed.options.band ?? [8, 30], window: parsed.options.epoch ?? [0.5, 2.5], chanceLevel: chance, methods: rows }))
    return 0
  }
  const best = ok.reduce<(typeof ok)[number] | undefined>((b, r) => (!b || r.accuracy! > b.accuracy! ? r : b), undefined)
  const lines = [`method            accuracy   kappa   ITR bits/trial  components  folds`]
  for (const r of rows) {
    if (r.accuracy === null) {
      lines.push(`${r.method.padEnd(17)} —          ${r.error}`)
      continue
    }
    lines.push(
      `${r.method.padEnd(17)} ${(100 * r.accuracy).toFixed(1).padStart(6)} %  ${r.kappa!.toFixed(3).padStart(6)}  ${r.itrBitsPerTrial!.toFixed(3).padStart(14)}  ${String(r.components).padStart(10)}  ${r.foldAccuracy.map((a) => (100 * a).toFixed(0)).join('/')}` +
        (r === best ? '  <- best' : ''),
    )
  }
  if (chance !== null) lines.push(`chance level for ${recording.cues.length ? 'these trials' : 'this count'}: ${(100 * chance).toFixed(1)} % (binomial, p = 0.05)`)
  console.log(lines.join('\n'))
  return 0
}
