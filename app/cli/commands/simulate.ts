// `tiller simulate`: the bundled signal simulator from the command line. File mode writes a
// simulated calibration run; live mode attaches a simulated participant to a session's
// ingest endpoint as a device link.
import { writeFileSync } from 'node:fs'
import { SIMULATE_USAGE, parseSimulateArgs, type SimulateArgs } from '../../../simulator/cli-args'
import { writeSimulatedRecording } from '../../../simulator/file-mode'
import { startLiveDevice } from '../../../simulator/live-device'

export const summary = 'simulated participant: write EDF+/BDF/CSV recordings or stream live to a session'

export async function run(args: string[]): Promise<number> {
  const parsed = parseSimulateArgs(args)
  if (parsed.help) {
    console.log(SIMULATE_USAGE)
    return 0
  }
  return parsed.mode === 'file' ? runFileMode(parsed) : runLiveMode(parsed)
}

function runFileMode(a: SimulateArgs): number {
  const { bytes, recording, truth } = writeSimulatedRecording({
    format: a.format!,
    channels: a.channels,
    rateHz: a.rateHz,
    seed: a.seed,
    classes: a.classes,
    trialsPerClass: a.trialsPerClass,
    reference: a.reference,
    participant: a.participant,
    rhythms: a.rhythms,
    artifacts: a.artifacts,
    timing: a.timing,
  })
  writeFileSync(a.out!, bytes)
  if (a.truthFile) writeFileSync(a.truthFile, JSON.stringify(truth, null, 1))
  const seconds = recording.data[0].length / recording.rateHz
  const performed = truth.trials.filter((t) => t.outcome === 'as-cued').length
  console.log(
    `wrote ${a.out} (${a.format}, ${(bytes.length / 1e6).toFixed(1)} MB): ${recording.channels.length} channels at ${recording.rateHz} Hz, ` +
      `${seconds.toFixed(0)} s, ${recording.cues.length} trials (${a.classes.join('/')}), ${performed} performed as cued, seed ${a.seed}` +
      (a.truthFile ? `; truth in ${a.truthFile}` : ''),
  )
  return 0
}

async function runLiveMode(a: SimulateArgs): Promise<number> {
  const device = startLiveDevice({
    url: a.url!,
    token: a.token!,
    channels: a.channels,
    rateHz: a.rateHz,
    blockSamples: a.blockSamples,
    seed: a.seed,
    classes: a.classes,
    participant: a.participant,
    rhythms: a.rhythms,
    artifacts: a.artifacts,
    faults: a.faults,
    speed: a.speed,
  })
  let exitCode = 0
  device.on('state', (s) => console.log(`device ${s}`))
  device.on('message', (m) => {
    if (m.type === 'welcome') {
      console.log(`welcome: session ${m.sessionId}, run ${m.runId ?? '(none yet)'}, next sample ${m.nextSample}`)
      if (a.session && m.sessionId !== a.session) {
        console.error(`the token belongs to session ${m.sessionId}, not ${a.session}; stopping`)
        exitCode = 1
        void device.stop()
      }
    }
  })
  device.on('cue', (c) => console.log(`cue: trial ${c.trial} ${c.label} ${c.phase} at sample ${c.atSample}`))
  device.on('fault', (f) => console.log(`${f.kind}: ${f.detail}`))
  device.on('close', (c) => {
    if (!c.willReconnect && c.code !== 1000) exitCode = 1
  })
  const stopped = new Promise<void>((resolve) => device.on('state', (s) => s === 'stopped' && resolve()))
  const stop = () => void device.stop()
  process.once('SIGINT', stop)
  process.once('SIGTERM', stop)
  const timer = a.durationSeconds ? setTimeout(stop, a.durationSeconds * 1000) : null
  await stopped
  if (timer) clearTimeout(timer)
  process.off('SIGINT', stop)
  process.off('SIGTERM', stop)
  if (a.truthFile) writeFileSync(a.truthFile, JSON.stringify({ ...device.truth(), faultLog: device.faultLog(), stats: device.stats }, null, 1))
  const s = device.stats
  console.log(`stopped: ${s.blocksSent} blocks, ${s.samplesGenerated} samples, ${s.cuesReceived} cues, ${s.reconnects} reconnects${s.lastClose ? `, last close ${s.lastClose.code} ${s.lastClose.reason}` : ''}`)
  return exitCode
}
