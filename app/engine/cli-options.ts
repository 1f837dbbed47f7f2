// Parsing the engine options of `tiller train` and `tiller compare` from argument lists. Pure:
// the commands read the files; this turns words into validated options with clear errors.
import type { TrainOptions } from './decoder'
import { SPATIAL_METHODS, type SpatialMethodName } from './spatial/types'
import { readFlags } from '../lib/cli-flags'

export interface EngineCliArgs {
  file: string
  json: boolean
  help: boolean
  options: TrainOptions
  methods?: SpatialMethodName[]
  /** annotation texts that are cues (passed to the recording reader) */
  cueLabels?: string[]
  montageFile?: string
  outFile?: string
}

function range(flag: string, value: string): [number, number] {
  const m = /^\s*(-?[\d.]+)\s*[-:,]\s*(-?[\d.]+)\s*$/.exec(value)
  if (!m) throw new Error(`${flag} expects a range like 8-30, got '${value}'`)
  const lo = Number(m[1])
  const hi = Number(m[2])
  if (!Number.isFinite(lo) || !Number.isFinite(hi) || !(hi > lo)) throw new Error(`${flag} range '${value}' must have its end above its start`)
  return [lo, hi]
}

function integer(flag: string, value: string, min: number): number {
  const n = Number(value)
  if (!Number.isInteger(n) || n < min) throw new Error(`${flag} expects an integer >= ${min}, got '${value}'`)
  return n
}

function method(value: string): SpatialMethodName {
  if (!(SPATIAL_METHODS as string[]).includes(value)) throw new Error(`unknown method '${value}'; choose one of ${SPATIAL_METHODS.join(', ')}`)
  return value as SpatialMethodName
}

const list = (value: string) => value.split(',').map((s) => s.trim()).filter(Boolean)

export function parseEngineArgs(args: string[], command: 'train' | 'compare'): EngineCliArgs {
  const out: EngineCliArgs = { file: '', json: false, help: false, options: {} }
  const files: string[] = []
  readFlags(args, (flag, value, arg) => {
    switch (flag) {
      case '--json': out.json = true; break
      case '--help': case '-h': out.help = true; break
      case '--method':
        if (command !== 'train') throw new Error('--method is for train; compare takes --methods')
        out.options.method = method(value()); break
      case '--methods': out.methods = list(value()).map(method); break
      case '--band': out.options.band = range(flag, value()); break
      case '--window': out.options.epoch = range(flag, value()); break
      case '--classes': out.options.classes = list(value()); break
      case '--folds': out.options.folds = integer(flag, value(), 2); break
      case '--pairs': out.options.pairs = integer(flag, value(), 1); break
      case '--order': out.options.filterOrder = integer(flag, value(), 1); break
      case '--notch': {
        const v = value()
        if (v === 'none') out.options.notchHz = null
        else if (v === '50' || v === '60') out.options.notchHz = Number(v)
        else throw new Error(`--notch expects 50, 60 or none, got '${v}'`)
        break
      }
      case '--cue-labels': out.cueLabels = list(value()); break
      case '--montage': out.montageFile = value(); break
      case '--out':
        if (command !== 'train') throw new Error('--out is for train')
        out.outFile = value(); break
      default:
        if (flag.startsWith('-')) throw new Error(`unknown option '${flag}'`)
        files.push(arg)
    }
  })
  if (!out.help) {
    if (files.length !== 1) throw new Error(files.length === 0 ? 'give one recording file (EDF, EDF+, BDF or CSV)' : `give one recording file, got ${files.length}`)
    out.file = files[0]
  }
  // Cues in other files are often coded (T1, T2): --classes names them unless --cue-labels does.
  if (!out.cueLabels && out.options.classes) out.cueLabels = out.options.classes
  return out
}

export const ENGINE_OPTIONS_HELP = `  --band LO-HI       band-pass in Hz (default 8-30)
  --window A-B       epoch after each cue in seconds (default 0.5-2.5)
  --classes a,b      classes (cue texts) in decoder order (default: all cue texts)
  --folds K          chronological cross-validation folds (default 5)
  --pairs M          CSP filters from each end (default 3)
  --order N          Butterworth order (default 4)
  --notch 50|60|none mains notch (default none)
  --cue-labels a,b   annotation texts that are cues (default: --classes, else duration-less annotations)
  --montage FILE     electrode positions CSV (default: 10-20/10-10 positions by channel name)
  --json             print one JSON object`
