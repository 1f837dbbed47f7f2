// `tiller simulate` options: words -> validated settings, with errors that name the flag.
// Pure apart from reading a montage CSV the user names.
import { readFileSync } from 'node:fs'
import { MontageError, PRESET_COUNTS, montagePreset, parseMontageCsv, presetName, type ChannelPosition, type PresetCount } from '../app/engine/montage'
import { sensorimotorChannels, MAX_SIMULATED_CHANNELS } from './channels'
import { FAULT_KINDS, type FaultSettings } from './faults'
import { DEFAULT_ARTIFACTS, NO_ARTIFACTS, type ArtifactSettings, type RhythmSettings } from './generator'
import type { ParticipantSettings } from './participant'
import type { TrialTiming } from './schedule'
import { readFlags } from '../app/lib/cli-flags'

export const SIMULATE_USAGE = `usage:
  tiller simulate --out FILE [--format edf|bdf|csv] [--channels N | --montage NAME|FILE.csv]
                  [--rate HZ] [--classes left,right] [--trials-per-class N] [--skill 0..1] [--seed S]
                  [--truth FILE.json] [model options]
  tiller simulate --url ws://HOST:PORT/ingest --token TOKEN [--session ID] [--block-samples N]
                  [--duration SECONDS] [--faults LIST] [--channels N | --montage ...] [--rate HZ] [model options]

file mode writes a simulated calibration run (EDF+ cues are annotations named by class);
the same seed gives the same file. live mode connects to a session as a device link, paces
blocks by the wall clock and follows the cues the server sends, until --duration or Ctrl-C.

  --channels N          N 10-10/10-5 sites around C3/Cz/C4 (default 22; at most ${MAX_SIMULATED_CHANNELS})
  --montage NAME        a preset (${PRESET_COUNTS.join(', ')}, e.g. '21' or '${presetName(21)}') or a montage CSV file
  --rate HZ             sample rate (default 250)
  --classes a,b         classes: left, right, feet, rest (default left,right)
  --trials-per-class N  file mode (default 20)
  --skill S             share of trials performed as cued, 0..1 (default 0.85)
  --erd-depth D         fraction of mu/beta power lost over the contralateral area (default 0.3)
  --fatigue F           fraction of the ERD depth lost per hour (default 0.15)
  --mu-hz F             mu frequency (default 11); --beta-hz, --alpha-hz likewise
  --imagery-seconds T   length of the imagery period in file mode (default 4)
  --mains 50|60|0       mains frequency (default 50; 0 = none)
  --artifacts on|off    eye, muscle, drift, pops and mains (default on)
  --blinks N, --muscle N, --pops N   events per minute
  --flat a,b / --noisy a,b           channels that are flat / noisy
  --reference infinity|average       reference of the simulated potentials (default infinity)
  --truth FILE          also write what was planted (patterns, ERD per trial; in live mode
                        also the fault log) as JSON
  --faults LIST         live mode: e.g. drop=0.01,duplicate=0.01,reorder=0.01,nan=0.001,
                        wrong-channel-count=0.001,jitter=30 (ms),disconnect=60 (every N s),
                        reconnect-delay=1000 (ms)
  --speed X             live mode: stream X times faster than real time (rehearsal, tests)`

export interface SimulateArgs {
  help: boolean
  mode: 'file' | 'live'
  out?: string
  format?: 'edf' | 'bdf' | 'csv'
  truthFile?: string
  url?: string
  token?: string
  session?: string
  blockSamples?: number
  durationSeconds?: number
  speed?: number
  channels: ChannelPosition[]
  rateHz: number
  classes: string[]
  trialsPerClass: number
  seed: number
  reference: 'infinity' | 'average'
  participant: Partial<ParticipantSettings>
  rhythms: Partial<RhythmSettings>
  artifacts: Partial<ArtifactSettings>
  timing: Partial<TrialTiming>
  faults: Partial<FaultSettings>
}

function number(flag: string, value: string, min: number, max: number): number {
  const n = Number(value)
  if (value.trim() === '' || !Number.isFinite(n) || n < min || n > max) throw new Error(`${flag} expects a number from ${min} to ${max}, got '${value}'`)
  return n
}

function integer(flag: string, value: string, min: number, max: number): number {
  const n = number(flag, value, min, max)
  if (!Number.isInteger(n)) throw new Error(`${flag} expects a whole number, got '${value}'`)
  return n
}

const list = (value: string) => value.split(',').map((s) => s.trim()).filter(Boolean)

export function montageFromArg(value: string, readFile: (path: string) => string = (p) => readFileSync(p, 'utf8')): ChannelPosition[] {
  const count = Number(value)
  if ((PRESET_COUNTS as readonly number[]).includes(count)) return montagePreset(count as PresetCount)
  const byName = PRESET_COUNTS.find((c) => presetName(c).toLowerCase() === value.trim().toLowerCase())
  if (byName) return montagePreset(byName)
  if (/\.(csv|txt)$/i.test(value)) {
    try {
      return parseMontageCsv(readFile(value))
    } catch (error) {
      if (error instanceof MontageError) throw new Error(`--montage ${value}: ${error.message}`)
      throw new Error(`--montage ${value}: cannot read the file (${(error as Error).message})`)
    }
  }
  throw new Error(`--montage expects a preset (${PRESET_COUNTS.map((c) => `${c} '${presetName(c)}'`).join(', ')}) or a montage CSV file, got '${value}'`)
}

function parseFaults(value: string): Partial<FaultSettings> {
  const out: Partial<FaultSettings> = {}
  for (const item of list(value)) {
    const [key, raw] = item.split('=').map((s) => s.trim())
    if (raw === undefined) throw new Error(`--faults item '${item}' needs a value, e.g. drop=0.01`)
    switch (key) {
      case 'drop': out.dropRate = number('--faults drop', raw, 0, 1); break
      case 'duplicate': out.duplicateRate = number('--faults duplicate', raw, 0, 1); break
      case 'reorder': out.reorderRate = number('--faults reorder', raw, 0, 1); break
      case 'nan': out.nanRate = number('--faults nan', raw, 0, 1); break
      case 'wrong-channel-count': out.wrongChannelCountRate = number('--faults wrong-channel-count', raw, 0, 1); break
      case 'jitter': out.jitterMs = number('--faults jitter', raw, 0, 10_000); break
      case 'disconnect': out.disconnectEverySeconds = number('--faults disconnect', raw, 0, 86_400); break
      case 'reconnect-delay': out.reconnectDelayMs = number('--faults reconnect-delay', raw, 0, 600_000); break
      default: throw new Error(`unknown fault '${key}'; use ${[...FAULT_KINDS.filter((k) => k !== 'disconnect'), 'disconnect', 'reconnect-delay'].join(', ')}`)
    }
  }
  return out
}

export function parseSimulateArgs(args: readonly string[]): SimulateArgs {
  const out: SimulateArgs = {
    help: false,
    mode: 'file',
    channels: [],
    rateHz: 250,
    classes: ['left', 'right'],
    trialsPerClass: 20,
    seed: 1,
    reference: 'infinity',
    participant: {},
    rhythms: {},
    artifacts: {},
    timing: {},
    faults: {},
  }
  let channelCount: number | undefined
  let montage: ChannelPosition[] | undefined
  readFlags(args, (flag, value, arg) => {
    switch (flag) {
      case '--help': case '-h': out.help = true; break
      case '--out': out.out = value(); break
      case '--format': {
        const f = value().toLowerCase()
        if (f !== 'edf' && f !== 'bdf' && f !== 'csv') throw new Error(`--format expects edf, bdf or csv, got '${f}'`)
        out.format = f
        break
      }
      case '--truth': out.truthFile = value(); break
      case '--url': out.url = value(); break
      case '--token': out.token = value(); break
      case '--session': out.session = value(); break
      case '--block-samples': out.blockSamples = integer(flag, value(), 1, 1024); break
      case '--duration': out.durationSeconds = number(flag, value(), 0.1, 7 * 86_400); break
      case '--speed': out.speed = number(flag, value(), 0.01, 1000); break
      case '--channels': channelCount = integer(flag, value(), 1, MAX_SIMULATED_CHANNELS); break
      case '--montage': montage = montageFromArg(value()); break
      case '--rate': out.rateHz = number(flag, value(), 32, 20_000); break
      case '--classes': out.classes = list(value()); break
      case '--trials-per-class': out.trialsPerClass = integer(flag, value(), 1, 10_000); break
      case '--seed': out.seed = integer(flag, value(), 0, 2 ** 31 - 1); break
      case '--skill': out.participant.skill = number(flag, value(), 0, 1); break
      case '--erd-depth': out.participant.erdDepth = number(flag, value(), 0, 0.95); break
      case '--fatigue': out.participant.fatiguePerHour = number(flag, value(), 0, 1); break
      case '--mu-hz': out.rhythms.muHz = number(flag, value(), 1, 40); break
      case '--beta-hz': out.rhythms.betaHz = number(flag, value(), 1, 60); break
      case '--alpha-hz': out.rhythms.alphaHz = number(flag, value(), 1, 40); break
      case '--imagery-seconds': out.timing.imagerySeconds = number(flag, value(), 0.5, 60); break
      case '--mains': {
        const m = Number(value())
        if (m !== 0 && m !== 50 && m !== 60) throw new Error(`--mains expects 50, 60 or 0, got '${m}'`)
        out.artifacts.mainsHz = m
        break
      }
      case '--artifacts': {
        const v = value()
        if (v !== 'on' && v !== 'off') throw new Error(`--artifacts expects on or off, got '${v}'`)
        Object.assign(out.artifacts, v === 'off' ? { ...NO_ARTIFACTS, ...pick(out.artifacts) } : { ...DEFAULT_ARTIFACTS, ...pick(out.artifacts) })
        break
      }
      case '--blinks': out.artifacts.blinksPerMinute = number(flag, value(), 0, 120); break
      case '--muscle': out.artifacts.muscleBurstsPerMinute = number(flag, value(), 0, 120); break
      case '--pops': out.artifacts.popsPerMinute = number(flag, value(), 0, 120); break
      case '--flat': out.artifacts.flatChannels = list(value()); break
      case '--noisy': out.artifacts.noisyChannels = list(value()); break
      case '--reference': {
        const r = value()
        if (r !== 'infinity' && r !== 'average') throw new Error(`--reference expects infinity or average, got '${r}'`)
        out.reference = r
        break
      }
      case '--faults': out.faults = { ...out.faults, ...parseFaults(value()) }; break
      default: throw new Error(`unknown option '${arg}'. Run 'tiller simulate --help'.`)
    }
  })
  if (out.help) return out
  if (channelCount !== undefined && montage) throw new Error('give --channels or --montage, not both')
  out.channels = montage ?? sensorimotorChannels(channelCount ?? 22)
  if (out.url || out.token) {
    if (out.out) throw new Error('--out (file mode) and --url (live mode) cannot be combined')
    if (!out.url || !out.token) throw new Error('live mode needs both --url and --token')
    out.mode = 'live'
  } else {
    if (!out.out) throw new Error('file mode needs --out FILE (or give --url and --token for live mode)')
    const ext = /\.([A-Za-z0-9]+)$/.exec(out.out)?.[1]?.toLowerCase()
    const implied = ext === 'edf' || ext === 'bdf' || ext === 'csv' ? ext : undefined
    if (!out.format) out.format = implied ?? 'edf'
    else if (implied && implied !== out.format) throw new Error(`--out ${out.out} has a .${implied} name but --format is ${out.format}`)
  }
  return out
}

/** Settings given before --artifacts on|off that must survive it. */
function pick(a: Partial<ArtifactSettings>): Partial<ArtifactSettings> {
  return Object.fromEntries(Object.entries(a).filter(([, v]) => v !== undefined)) as Partial<ArtifactSettings>
}
