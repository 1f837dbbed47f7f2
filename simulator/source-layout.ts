// Where the simulated sources sit and how each projects to the montage (its pattern). Every
// pattern comes from the dipole forward model, then is scaled so that one unit of the
// source's time course is 1 µV at its reference site — so amplitudes can be set in the
// microvolts the trade reports, whatever the montage.
import { STANDARD_POSITIONS, type ChannelPosition, type Position } from '../app/engine/montage'
import { leadfieldColumnUvPerNam, pointBeneath, type Vector3 } from './forward-model'
import { MOTOR_AREAS, type MotorArea } from './participant'
import type { RandomStream } from './random'

export type SourceKind = 'motor' | 'alpha' | 'background' | 'blink' | 'saccade' | 'muscle'

export interface PlantedSource {
  name: string
  kind: SourceKind
  /** The site the source sits beneath and is normalised to (1 unit = 1 µV there, reference at infinity). */
  site: string | null
  area?: MotorArea
  locationM: Vector3
  direction: Vector3
  /** Dipole moment (nA·m) that one unit of the time course stands for. */
  momentNamPerUnit: number
  /** µV at each montage channel per unit of the time course. */
  pattern: Float32Array
}

/** Depth of the cortical generators below the scalp, metres (scalp + skull + CSF ≈ 1.5–2 cm plus cortex; common practice). */
export const CORTICAL_DEPTH_M = 0.028
const MUSCLE_DEPTH_M = 0.008
/** Eyeball centres, metres, in the montage frame: below the Fp1/Fp2 equator, in front. */
const EYE_CENTRES_M: Vector3[] = [
  { x: -0.032, y: 0.072, z: -0.03 },
  { x: 0.032, y: 0.072, z: -0.03 },
]
const BACKGROUND_SOURCE_COUNT = 10

function site(name: string): Position {
  const p = STANDARD_POSITIONS[name]
  if (!p) throw new Error(`internal: no standard position for ${name}`)
  return p
}

function radialDirection(p: Position): Vector3 {
  return { x: p.x, y: p.y, z: p.z }
}

const ALL_STANDARD_SITES: Position[] = Object.entries(STANDARD_POSITIONS)
  .filter(([n]) => !['A1', 'A2', 'M1', 'M2', 'Nz', 'Iz'].includes(n))
  .map(([, p]) => p)

function makeSource(
  name: string,
  kind: SourceKind,
  siteName: string | null,
  location: Vector3,
  direction: Vector3,
  channels: readonly ChannelPosition[],
  reference: 'infinity' | 'average',
  area?: MotorArea,
): PlantedSource {
  const column = leadfieldColumnUvPerNam(location, direction, channels, reference)
  let uvPerNamAtSite: number
  if (siteName) {
    uvPerNamAtSite = leadfieldColumnUvPerNam(location, direction, [site(siteName)], 'infinity')[0]
  } else {
    // Background sources: normalise by the RMS over the whole 10-10 head instead.
    const all = leadfieldColumnUvPerNam(location, direction, ALL_STANDARD_SITES, 'infinity')
    let sum = 0
    for (const v of all) sum += v * v
    uvPerNamAtSite = Math.sqrt(sum / all.length)
  }
  const momentNamPerUnit = 1 / uvPerNamAtSite
  const pattern = new Float32Array(column.length)
  for (let i = 0; i < column.length; i++) pattern[i] = column[i] * momentNamPerUnit
  return { name, kind, site: siteName, area, locationM: location, direction, momentNamPerUnit, pattern }
}

/** The fixed set of planted sources for a montage. `random` places the background sources. */
export function buildSourceLayout(
  channels: readonly ChannelPosition[],
  reference: 'infinity' | 'average',
  random: RandomStream,
): PlantedSource[] {
  const sources: PlantedSource[] = []
  // Hand and foot areas: radial dipoles beneath C3, C4 and Cz. (The foot area lies in the
  // interhemispheric fissure; a radial dipole under Cz is the usual simplification.)
  for (const { area, site: s } of MOTOR_AREAS) {
    const p = site(s)
    sources.push(makeSource(`${area} mu/beta`, 'motor', s, pointBeneath(p, CORTICAL_DEPTH_M), radialDirection(p), channels, reference, area))
  }
  for (const s of ['O1', 'O2']) {
    const p = site(s)
    sources.push(makeSource(`occipital alpha ${s}`, 'alpha', s, pointBeneath(p, CORTICAL_DEPTH_M), radialDirection(p), channels, reference))
  }
  for (let i = 0; i < BACKGROUND_SOURCE_COUNT; i++) {
    // Random directions, 2–6 cm from the centre, above the skull base, random orientation: a spatially smooth,
    // correlated background like the one many weak cortical generators make.
    let d: Vector3
    do d = { x: random.gaussian(), y: random.gaussian(), z: random.gaussian() }
    while (d.z < -0.2 * Math.hypot(d.x, d.y, d.z))
    const n = Math.hypot(d.x, d.y, d.z)
    const r = 0.02 + 0.04 * Math.cbrt(random.uniform())
    const location = { x: (d.x / n) * r, y: (d.y / n) * r, z: (d.z / n) * r }
    const direction = { x: random.gaussian(), y: random.gaussian(), z: random.gaussian() }
    sources.push(makeSource(`background ${i + 1}`, 'background', null, location, direction, channels, reference))
  }
  // Eye blinks: the corneo-retinal dipoles of both eyes turn upward; modelled as one vertical
  // dipole between the eyes, 1 unit = 1 µV at Fpz. Horizontal eye movements: a left-right
  // dipole, 1 unit = 1 µV at F8 (positive when looking right).
  const between = { x: 0, y: EYE_CENTRES_M[0].y, z: EYE_CENTRES_M[0].z }
  sources.push(makeSource('eye blink', 'blink', 'Fpz', between, { x: 0, y: 0.3, z: 1 }, channels, reference))
  sources.push(makeSource('eye movement', 'saccade', 'F8', between, { x: 1, y: 0, z: 0 }, channels, reference))
  for (const s of ['T7', 'T8']) {
    const p = site(s)
    sources.push(makeSource(`temporal muscle ${s}`, 'muscle', s, pointBeneath(p, MUSCLE_DEPTH_M), radialDirection(p), channels, reference))
  }
  return sources
}
