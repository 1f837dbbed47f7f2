// `tiller train <recording>`: trains a decoder with chronological cross-validation and prints
// it with its validation; --json prints one JSON object, --out saves the decoder.
import { readFileSync, writeFileSync } from 'node:fs'
import { basename } from 'node:path'
import { ENGINE_OPTIONS_HELP, parseEngineArgs } from '~/engine/cli-options'
import { trainDecoder, type Decoder } from '~/engine/decoder'
import { readRecording } from '~/engine/formats/index'
import { parseMontageCsv, positionFor } from '~/engine/montage'
import type { Recording } from '~/engine/recording'
import type { ChannelPosition } from '~/engine/spatial/types'

export const summary = 'train a decoder on a recording and print its cross-validated accuracy'

const USAGE = `usage: tiller train <recording> [--method csp] [--band 8-30] [--window 0.5-2.5] [--classes left,right] [--folds 5] [--json] [--out decoder.json]
  --method NAME      none, car, bipolar, laplacian-small, laplacian-large, pca, ica, csp, rcsp, csp-ovr, fbcsp
${ENGINE_OPTIONS_HELP}
  --out FILE         write the decoder JSON to FILE

A decoder's output is a control signal for research or supervised clinical use under an
approved protocol; it is not a diagnosis.`

/** Positions for the recording's channels: from a montage CSV, else 10-20/10-10 names. */
export function positionsForRecording(recording: Recording, montageFile?: string): ChannelPosition[] {
  if (montageFile) return parseMontageCsv(readFileSync(montageFile, 'utf8'))
  return recording.channels.flatMap((name) => {
    const p = positionFor(name)
    return p ? [{ name, ...p }] : []
  })
}

export function loadRecording(file: string, cueLabels?: string[]): Recording {
  let bytes: Uint8Array
  try {
    bytes = readFileSync(file)
  } catch (e) {
    throw new Error(`cannot read '${file}': ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`)
  }
  const recording = readRecording(bytes, basename(file), cueLabels ? { cueLabels } : {})
  if (cueLabels && recording.cues.length === 0) {
    // Say which cue texts the file does have, so the operator can name them.
    const plain = readRecording(bytes, basename(file))
    const found = [...new Set([...plain.cues.map((c) => c.label), ...plain.annotations.map((a) => a.text.trim())])].filter(Boolean).slice(0, 12)
    throw new Error(`no cues labelled ${cueLabels.join(', ')} in '${file}'${found.length ? `; it has: ${found.join(', ')}` : ''}`)
  }
  return recording
}

export function decoderJson(decoder: Decoder) {
  return {
    method: decoder.method,
    channels: decoder.channels,
    classes: decoder.classes,
    band: decoder.band,
    window: decoder.epoch,
    rateHz: decoder.rateHz,
    trials: decoder.trialCount,
    cv: decoder.cv,
    decoder,
  }
}

const pct = (v: number) => `${(100 * v).toFixed(1)} %`

export async function run(args: string[]): Promise<number> {
  const parsed = parseEngineArgs(args, 'train')
  if (parsed.help) {
    console.log(USAGE)
    return 0
  }
  const recording = loadRecording(parsed.file, parsed.cueLabels)
  const positions = positionsForRecording(recording, parsed.montageFile)
  const decoder = trainDecoder(recording, { ...parsed.options, positions })
  if (parsed.outFile) writeFileSync(parsed.outFile, JSON.stringify(decoder, null, 2) + '\n')
  if (parsed.json) {
    console.log(JSON.stringify(decoderJson(decoder)))
    return 0
  }
  const cv = decoder.cv
  const lines = [
    `recording  ${parsed.file}: ${recording.channels.length} channels at ${recording.rateHz} Hz, ${decoder.trialCount} trials (${decoder.classes.join(' / ')})` +
      (decoder.skippedTrials ? `, ${decoder.skippedTrials} cue(s) too close to the end skipped` : ''),
    `decoder    ${decoder.method}, band ${decoder.band[0]}-${decoder.band[1]} Hz (Butterworth order ${decoder.filterOrder}${decoder.notchHz ? `, notch ${decoder.notchHz} Hz` : ''}), epoch ${decoder.epoch[0]}-${decoder.epoch[1]} s, ${decoder.filters.length} components`,
    `validation ${cv.k}-fold chronological: accuracy ${pct(cv.accuracy)}, kappa ${cv.kappa.toFixed(3)}, chance level ${pct(cv.chanceLevel)} (p = 0.05), ITR ${cv.itrBitsPerTrial.toFixed(3)} bits/trial, ${cv.itrBitsPerMinute.toFixed(2)} bits/min`,
    `folds      ${cv.folds.map((f) => pct(f.accuracy)).join('  ')}`,
    'confusion  (rows: cue, columns: decided)',
    ...cv.confusion.map((row, i) => `  ${decoder.classes[i].padEnd(10)} ${row.map((v) => String(v).padStart(5)).join('')}`),
  ]
  if (cv.accuracy <= cv.chanceLevel) lines.push('note       accuracy is not above the chance level for this trial count')
  if (parsed.outFile) lines.push(`saved      ${parsed.outFile}`)
  console.log(lines.join('\n'))
  return 0
}
