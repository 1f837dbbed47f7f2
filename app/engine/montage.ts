// Electrode positions of the international 10-20 / 10-10 system (Oostenveld & Praamstra 2001,
// Clin. Neurophysiol. 112:713) on a unit sphere, montage presets, neighbour search for the
// surface Laplacian (Hjorth 1975; McFarland et al. 1997) and a projection for scalp maps.
//
// Coordinates: x toward the right ear, y toward the nose, z up; origin at the sphere centre.
//
// Construction (the idealised spherical head used for 10-20 layouts): the 10 % contour
// Fpz-T7-Oz-T8 is the equator, so one 10 % step of the nasion-inion arc is 180°/8 = 22.5°
// of latitude (Fpz 0°, AFz 22.5°, Fz 45°, FCz 67.5°, Cz 90°). On the equator the sites sit
// every 10 % of the circumference, i.e. every 18° of azimuth (Fp2 18°, AF8 36°, F8 54°,
// FT8 72°, T8 90°, ... O2 162°). The 9/10 sites (F9, T9, ...) and Nz/Iz lie one step
// (22.5°) below the equator. Each row (AF, F, FC, C, CP, P, PO) is the circle on the sphere
// through its lateral site, its midline site and the mirrored lateral site; the arc from
// the lateral site to the midline is cut into four equal parts (x7, x5, x3, x1, xz), as the
// 10-10 system subdivides rows (Oostenveld & Praamstra 2001). Checked against MNE's
// standard_1005 template in tests/unit/montage.test.ts.

export interface Position {
  x: number
  y: number
  z: number
}

export interface ChannelPosition extends Position {
  name: string
}

const STEP_DEG = 22.5 // one 10 % step along the nasion-inion arc when Fpz..Oz is the equator
const DEG = Math.PI / 180

function fromAngles(azimuthDeg: number, elevationDeg: number): Position {
  // azimuth: 0° at the nose, +90° at the right ear; elevation: 0° on the equator, +90° at Cz.
  const az = azimuthDeg * DEG
  const el = elevationDeg * DEG
  return { x: Math.cos(el) * Math.sin(az), y: Math.cos(el) * Math.cos(az), z: Math.sin(el) }
}

function dot(a: Position, b: Position): number {
  return a.x * b.x + a.y * b.y + a.z * b.z
}

function cross(a: Position, b: Position): Position {
  return { x: a.y * b.z - a.z * b.y, y: a.z * b.x - a.x * b.z, z: a.x * b.y - a.y * b.x }
}

function scale(a: Position, s: number): Position {
  return { x: a.x * s, y: a.y * s, z: a.z * s }
}

function add(a: Position, b: Position): Position {
  return { x: a.x + b.x, y: a.y + b.y, z: a.z + b.z }
}

function sub(a: Position, b: Position): Position {
  return { x: a.x - b.x, y: a.y - b.y, z: a.z - b.z }
}

function normalise(a: Position): Position {
  const n = Math.hypot(a.x, a.y, a.z)
  return scale(a, 1 / n)
}

/** Points dividing the arc from `from` to `to` on the circle through from, to and `third`. */
function divideRowArc(from: Position, to: Position, third: Position, parts: number): Position[] {
  const normal = normalise(cross(sub(to, from), sub(third, from)))
  const centre = scale(normal, dot(normal, from))
  const u = sub(from, centre)
  const v = sub(to, centre)
  const angle = Math.atan2(dot(cross(u, v), normal), dot(u, v))
  const out: Position[] = []
  for (let i = 1; i < parts; i++) {
    const t = (angle * i) / parts
    // Rodrigues' rotation of u about the plane normal (u is perpendicular to it).
    const rotated = add(scale(u, Math.cos(t)), scale(cross(normal, u), Math.sin(t)))
    out.push(normalise(add(centre, rotated)))
  }
  return out
}

function buildStandardPositions(): Record<string, Position> {
  const p: Record<string, Position> = {}
  // Midline, front to back.
  const midline: [string, number][] = [
    ['Nz', -STEP_DEG], ['Fpz', 0], ['AFz', STEP_DEG], ['Fz', 2 * STEP_DEG], ['FCz', 3 * STEP_DEG],
  ]
  for (const [name, el] of midline) p[name] = fromAngles(0, el)
  p.Cz = { x: 0, y: 0, z: 1 }
  const midlineBack: [string, number][] = [
    ['CPz', 3 * STEP_DEG], ['Pz', 2 * STEP_DEG], ['POz', STEP_DEG], ['Oz', 0], ['Iz', -STEP_DEG],
  ]
  for (const [name, el] of midlineBack) p[name] = fromAngles(180, el)

  // Equator (10 % contour) and the row one step below it, left side (odd) then mirrored.
  const equator: [string, string | null, number][] = [
    ['Fp1', null, 18], ['AF7', 'AF9', 36], ['F7', 'F9', 54], ['FT7', 'FT9', 72], ['T7', 'T9', 90],
    ['TP7', 'TP9', 108], ['P7', 'P9', 126], ['PO7', 'PO9', 144], ['O1', 'I1', 162],
  ]
  for (const [name, lower, az] of equator) {
    p[name] = fromAngles(-az, 0)
    p[mirrorName(name)] = fromAngles(az, 0)
    if (lower) {
      p[lower] = fromAngles(-az, -STEP_DEG)
      p[mirrorName(lower)] = fromAngles(az, -STEP_DEG)
    }
  }

  // Rows: lateral site -> three interior sites -> midline site.
  const rows: [string, string, string, string[]][] = [
    ['AF', 'AF7', 'AFz', ['AF5', 'AF3', 'AF1']],
    ['F', 'F7', 'Fz', ['F5', 'F3', 'F1']],
    ['FC', 'FT7', 'FCz', ['FC5', 'FC3', 'FC1']],
    ['C', 'T7', 'Cz', ['C5', 'C3', 'C1']],
    ['CP', 'TP7', 'CPz', ['CP5', 'CP3', 'CP1']],
    ['P', 'P7', 'Pz', ['P5', 'P3', 'P1']],
    ['PO', 'PO7', 'POz', ['PO5', 'PO3', 'PO1']],
  ]
  for (const [, lateral, mid, interior] of rows) {
    const points = divideRowArc(p[lateral], p[mid], p[mirrorName(lateral)], 4)
    interior.forEach((name, i) => {
      p[name] = points[i]
      const m = points[i]
      p[mirrorName(name)] = { x: -m.x, y: m.y, z: m.z }
    })
  }

  // Ear lobes (A1/A2) and mastoids (M1/M2) are not sites of the arc construction; their
  // placement here is approximate (common practice: below and behind the preauricular
  // points), good enough for a reference channel on a scalp map, not for a Laplacian.
  p.A1 = fromAngles(-100, -40)
  p.A2 = fromAngles(100, -40)
  p.M1 = fromAngles(-115, -40)
  p.M2 = fromAngles(115, -40)
  return p
}

/** Left/right mirror of a 10-10 name: odd numbers are left, even right (C3 <-> C4). */
function mirrorName(name: string): string {
  const m = /^([A-Za-z]+)(\d+)$/.exec(name)
  if (!m) return name
  const n = Number(m[2])
  return m[1] + String(n % 2 === 1 ? n + 1 : n - 1)
}

/** Positions of the 10-20 / 10-10 sites on the unit sphere, keyed by modern name. */
export const STANDARD_POSITIONS: Readonly<Record<string, Readonly<Position>>> = Object.freeze(
  buildStandardPositions(),
)

/** Old 10-20 names that the 10-10 nomenclature renamed (Oostenveld & Praamstra 2001). */
const OLD_NAMES: Readonly<Record<string, string>> = { T3: 'T7', T4: 'T8', T5: 'P7', T6: 'P8' }

const BY_LOWER_CASE: ReadonlyMap<string, string> = new Map(
  Object.keys(STANDARD_POSITIONS).map((name) => [name.toLowerCase(), name]),
)

/**
 * The standard name for a channel label, or undefined when it is not a 10-10 site.
 * Accepts any case, the old names T3/T4/T5/T6, and labels as EDF files often carry them:
 * an 'EEG ' prefix, a reference suffix ('C3-REF', 'C3-A2') and padding dots ('C3..').
 */
export function standardName(label: string): string | undefined {
  const candidates = new Set<string>()
  const trimmed = label.trim()
  candidates.add(trimmed)
  let core = trimmed.replace(/^eeg[\s_:-]*/i, '').replace(/\.+$/, '')
  candidates.add(core)
  core = core.replace(/[-_\s](ref|avg|ar|le|re|a1|a2|m1|m2|cz)$/i, '')
  candidates.add(core)
  for (const c of candidates) {
    const old = Object.keys(OLD_NAMES).find((k) => k.toLowerCase() === c.toLowerCase())
    if (old) return OLD_NAMES[old]
    const found = BY_LOWER_CASE.get(c.toLowerCase())
    if (found) return found
  }
  return undefined
}

/** Unit-sphere position of a channel label (see standardName), or undefined. */
export function positionFor(label: string): Position | undefined {
  const name = standardName(label)
  if (!name) return undefined
  const p = STANDARD_POSITIONS[name]
  return { x: p.x, y: p.y, z: p.z }
}

export const PRESET_COUNTS = [8, 16, 21, 32, 64] as const
export type PresetCount = (typeof PRESET_COUNTS)[number]

const PRESETS: Record<PresetCount, { name: string; channels: string[] }> = {
  // Sensorimotor strip around C3/Cz/C4 with the sites just in front and behind.
  8: { name: 'sensorimotor 8', channels: ['FC3', 'FCz', 'FC4', 'C3', 'Cz', 'C4', 'CP3', 'CP4'] },
  // Wide enough that C3, Cz and C4 each have all four nearest neighbours (small Laplacian).
  16: {
    name: 'sensorimotor 16',
    channels: [
      'FC3', 'FC1', 'FCz', 'FC2', 'FC4',
      'C5', 'C3', 'C1', 'Cz', 'C2', 'C4', 'C6',
      'CP3', 'CPz', 'CP4', 'Pz',
    ],
  },
  // The 21 sites of the original 10-20 system, with the 10-10 names for T3/T4/T5/T6.
  21: {
    name: '10-20 (21)',
    channels: [
      'Fp1', 'Fpz', 'Fp2', 'F7', 'F3', 'Fz', 'F4', 'F8', 'T7', 'C3', 'Cz', 'C4', 'T8',
      'P7', 'P3', 'Pz', 'P4', 'P8', 'O1', 'Oz', 'O2',
    ],
  },
  // A common 32-site 10-10 cap layout (common practice).
  32: {
    name: '10-10 (32)',
    channels: [
      'Fp1', 'Fp2', 'AF3', 'AF4', 'F7', 'F3', 'Fz', 'F4', 'F8', 'FC5', 'FC1', 'FC2', 'FC6',
      'T7', 'C3', 'Cz', 'C4', 'T8', 'CP5', 'CP1', 'CP2', 'CP6', 'P7', 'P3', 'Pz', 'P4', 'P8',
      'PO3', 'PO4', 'O1', 'Oz', 'O2',
    ],
  },
  // A common 64-site 10-10 cap layout (common practice).
  64: {
    name: '10-10 (64)',
    channels: [
      'Fp1', 'Fpz', 'Fp2',
      'AF7', 'AF3', 'AFz', 'AF4', 'AF8',
      'F7', 'F5', 'F3', 'F1', 'Fz', 'F2', 'F4', 'F6', 'F8',
      'FT7', 'FC5', 'FC3', 'FC1', 'FCz', 'FC2', 'FC4', 'FC6', 'FT8',
      'T7', 'C5', 'C3', 'C1', 'Cz', 'C2', 'C4', 'C6', 'T8',
      'TP7', 'CP5', 'CP3', 'CP1', 'CPz', 'CP2', 'CP4', 'CP6', 'TP8',
      'P9', 'P7', 'P5', 'P3', 'P1', 'Pz', 'P2', 'P4', 'P6', 'P8', 'P10',
      'PO7', 'PO3', 'POz', 'PO4', 'PO8',
      'O1', 'Oz', 'O2', 'Iz',
    ],
  },
}

/** Display name of a preset, e.g. 'sensorimotor 16'. */
export function presetName(count: PresetCount): string {
  return PRESETS[count].name
}

/** The channels of a preset montage with their unit-sphere positions. */
export function montagePreset(count: PresetCount): ChannelPosition[] {
  const preset = PRESETS[count]
  if (!preset) throw new MontageError(`no montage preset with ${String(count)} channels; presets: ${PRESET_COUNTS.join(', ')}`)
  return preset.channels.map((name) => ({ name, ...STANDARD_POSITIONS[name] }))
}

export class MontageError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'MontageError'
  }
}

type ChannelLike = string | ChannelPosition

function resolvePositions(channels: readonly ChannelLike[]): (Position | undefined)[] {
  return channels.map((c) => (typeof c === 'string' ? positionFor(c) : normalise(c)))
}

/** Great-circle angle in radians between two unit vectors. */
export function angularDistance(a: Position, b: Position): number {
  // atan2 of |a×b| and a·b stays accurate for near and far pairs alike.
  const c = cross(a, b)
  return Math.atan2(Math.hypot(c.x, c.y, c.z), dot(a, b))
}

/**
 * For each channel, the indices of its k nearest other channels by great-circle distance,
 * nearest first. Channels without a known position get (and are) no neighbours.
 */
export function nearestNeighbours(channels: readonly ChannelLike[], k: number): number[][] {
  const pos = resolvePositions(channels)
  return pos.map((p, i) => {
    if (!p) return []
    const others: [number, number][] = []
    pos.forEach((q, j) => {
      if (q && j !== i) others.push([j, angularDistance(p, q)])
    })
    others.sort((a, b) => a[1] - b[1] || a[0] - b[0])
    return others.slice(0, Math.max(0, k)).map(([j]) => j)
  })
}

/**
 * Typical electrode spacing of a montage: the median over channels of the distance to the
 * nearest other channel (radians). 22.5° for a dense 10-10 layout, about 45° for 10-20.
 */
export function montageSpacing(channels: readonly ChannelLike[]): number {
  const pos = resolvePositions(channels).filter((p): p is Position => p !== undefined)
  const nearest: number[] = []
  pos.forEach((p, i) => {
    let best = Infinity
    pos.forEach((q, j) => {
      if (j !== i) best = Math.min(best, angularDistance(p, q))
    })
    if (Number.isFinite(best) && best > 1e-9) nearest.push(best)
  })
  if (nearest.length === 0) return NaN
  nearest.sort((a, b) => a - b)
  return nearest[Math.floor(nearest.length / 2)]
}

/**
 * Neighbours for a surface Laplacian (Hjorth 1975), the two derivations compared by
 * McFarland et al. 1997:
 * - 'small': the nearest ring, i.e. every channel within 1.3 x the distance to the channel's
 *   own nearest neighbour (C3 -> FC3, CP3, C5, C1 on a 64-site 10-10 cap; C3 -> FC5, FC1,
 *   CP5, CP1 on the common 32-site cap; C3 -> F3, P3, T7, Cz on the 21-site 10-20 set).
 * - 'large': the next-nearest ring in the same directions: for each small neighbour n, the
 *   channel closest to the point twice as far from the centre along the great circle
 *   through n (C3 -> F3, P3, T7, Cz on a 64-site cap), kept if it lies within half the
 *   inner step of that point. Channels at the montage's edge get fewer neighbours.
 * Unknown labels get, and are, no neighbours. Indices refer to `channels`.
 */
export function laplacianNeighbours(channels: readonly ChannelLike[], size: 'small' | 'large'): number[][] {
  const pos = resolvePositions(channels)
  const small = pos.map((p, i) => {
    if (!p) return []
    const d: [number, number][] = []
    pos.forEach((q, j) => {
      if (q && j !== i) {
        const dist = angularDistance(p, q)
        if (dist > 1e-9) d.push([j, dist])
      }
    })
    if (d.length === 0) return []
    const nearest = Math.min(...d.map(([, dist]) => dist))
    return d.filter(([, dist]) => dist <= 1.3 * nearest).sort((a, b) => a[1] - b[1] || a[0] - b[0]).map(([j]) => j)
  })
  if (size === 'small') return small
  return pos.map((p, i) => {
    if (!p) return []
    const out: number[] = []
    for (const n of small[i]) {
      const q = pos[n] as Position
      const step = angularDistance(p, q)
      const tangent = normalise(sub(q, scale(p, dot(p, q))))
      const target = add(scale(p, Math.cos(2 * step)), scale(tangent, Math.sin(2 * step)))
      let best = -1
      let bestDist = Infinity
      pos.forEach((r, j) => {
        if (!r || j === i) return
        const dist = angularDistance(r, target)
        if (dist < bestDist) {
          best = j
          bestDist = dist
        }
      })
      if (best >= 0 && bestDist < 0.5 * step && !out.includes(best) && !small[i].includes(best)) out.push(best)
    }
    return out
  })
}

/**
 * Azimuthal equidistant projection from the vertex (Cz) for 2-D scalp maps: the distance
 * from the centre is proportional to the angle from Cz, scaled so the 10 % contour
 * (Fpz-T7-Oz-T8, 90° from Cz) lies on the unit circle. Nose toward +y, right ear toward +x.
 */
export function projectToDisk(pos: Position): { x: number; y: number } {
  const n = Math.hypot(pos.x, pos.y, pos.z)
  if (!(n > 0)) return { x: 0, y: 0 }
  const theta = Math.acos(Math.max(-1, Math.min(1, pos.z / n)))
  const horizontal = Math.hypot(pos.x, pos.y)
  if (horizontal < 1e-12) return { x: 0, y: 0 }
  const r = theta / (Math.PI / 2)
  return { x: (r * pos.x) / horizontal, y: (r * pos.y) / horizontal }
}

/**
 * A montage from CSV text: one channel per line, either `name,x,y,z` (any unit; directions
 * are normalised onto the unit sphere with the same axes as STANDARD_POSITIONS) or `name`
 * alone, looked up among the standard positions. An optional header line (name,x,y,z),
 * blank lines and lines starting with '#' are skipped. Errors name the line.
 */
export function parseMontageCsv(text: string): ChannelPosition[] {
  const out: ChannelPosition[] = []
  const seen = new Map<string, number>()
  const lines = text.replace(/^\uFEFF/, '').split(/\r\n|\n|\r/)
  lines.forEach((raw, index) => {
    const lineNo = index + 1
    const line = raw.trim()
    if (line === '' || line.startsWith('#')) return
    const cells = line.split(/[,;\t]/).map((c) => c.trim().replace(/^"(.*)"$/, '$1'))
    if (out.length === 0 && seen.size === 0 && /^(name|label|channel|electrode)s?$/i.test(cells[0])) return
    const name = cells[0]
    if (name === '') throw new MontageError(`line ${lineNo}: empty channel name`)
    const key = name.toLowerCase()
    if (seen.has(key)) throw new MontageError(`line ${lineNo}: channel '${name}' already given on line ${seen.get(key)}`)
    let position: Position
    if (cells.length === 1 || (cells.length > 1 && cells.slice(1).every((c) => c === ''))) {
      const found = positionFor(name)
      if (!found) {
        throw new MontageError(`line ${lineNo}: '${name}' is not a 10-20/10-10 site; give its position as name,x,y,z`)
      }
      position = found
    } else if (cells.length === 4) {
      const values = cells.slice(1).map((c) => (c === '' ? NaN : Number(c)))
      const bad = values.findIndex((v) => !Number.isFinite(v))
      if (bad >= 0) throw new MontageError(`line ${lineNo}: ${'xyz'[bad]} of '${name}' is not a number ('${cells[bad + 1]}')`)
      const [x, y, z] = values
      const length = Math.hypot(x, y, z)
      if (!(length > 0)) throw new MontageError(`line ${lineNo}: '${name}' is at the origin; a position needs a direction`)
      position = { x: x / length, y: y / length, z: z / length }
    } else {
      throw new MontageError(`line ${lineNo}: expected 'name' or 'name,x,y,z', found ${cells.length} columns`)
    }
    seen.set(key, lineNo)
    out.push({ name, ...position })
  })
  if (out.length === 0) throw new MontageError('the montage file lists no channels')
  return out
}
