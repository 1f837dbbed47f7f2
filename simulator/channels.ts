// Which electrodes a simulated device has, and where they sit. Names are 10-20 / 10-10 sites
// (positions from the montage module) plus, for high-density devices, 10-5 "half" sites
// between them (Oostenveld & Praamstra 2001, Clin. Neurophysiol. 112:713): 'C3h' lies
// halfway between C3 and C1, 'FCC3' between FC3 and C3, 'FCC3h' in the middle of FC3, FC1,
// C3 and C1. Their positions here are normalised means of those neighbours, which is how
// the 10-5 system subdivides the 10-10 grid on a sphere.
import { STANDARD_POSITIONS, positionFor, type ChannelPosition, type Position } from '../app/engine/montage'

const REFERENCE_SITES = new Set(['A1', 'A2', 'M1', 'M2', 'Nz'])

/** The 10-10 name in `row` at signed column index (negative = left: -1 -> 1, -3 -> 3 ...). */
function site(row: string, column: number): string {
  if (column === 0) return `${row}z`
  const n = column < 0 ? -column * 2 - 1 : column * 2
  return `${row}${n}`
}

function normalisedMean(points: Position[]): Position {
  let x = 0
  let y = 0
  let z = 0
  for (const p of points) {
    x += p.x
    y += p.y
    z += p.z
  }
  const n = Math.hypot(x, y, z)
  return { x: x / n, y: y / n, z: z / n }
}

/** 10-5 sites over the sensorimotor strip, in the order a dense cap would add them. */
function halfSites(): Map<string, Position> {
  const out = new Map<string, Position>()
  const rows: [string, string, string][] = [
    ['FCC', 'FC', 'C'],
    ['CCP', 'C', 'CP'],
    ['FFC', 'F', 'FC'],
    ['CPP', 'CP', 'P'],
  ]
  const at = (name: string): Position => {
    const p = STANDARD_POSITIONS[name]
    if (!p) throw new Error(`internal: no standard position for ${name}`)
    return p
  }
  // Columns -3..3 are the 5/3/1/z/2/4/6 sites.
  const columns = [-3, -2, -1, 0, 1, 2, 3]
  // Half sites within the C, FC and CP rows: nh between n and the next site toward the midline.
  for (const row of ['C', 'FC', 'CP']) {
    for (const c of columns) {
      if (c === 0) continue
      const inner = c < 0 ? c + 1 : c - 1
      const name = `${site(row, c)}h`
      out.set(name, normalisedMean([at(site(row, c)), at(site(row, inner))]))
    }
  }
  for (const [row, front, back] of rows) {
    for (const c of columns) out.set(site(row, c), normalisedMean([at(site(front, c)), at(site(back, c))]))
    for (const c of columns) {
      if (c === 0) continue
      const inner = c < 0 ? c + 1 : c - 1
      out.set(`${site(row, c)}h`, normalisedMean([at(site(front, c)), at(site(front, inner)), at(site(back, c)), at(site(back, inner))]))
    }
  }
  return out
}

const HALF_SITES = halfSites()

/** Position of a 10-10 or supported 10-5 site, or undefined. */
export function simulatorPositionFor(name: string): Position | undefined {
  return positionFor(name) ?? HALF_SITES.get(name)
}

const SENSORIMOTOR_CENTRES = ['C3', 'Cz', 'C4'].map((n) => STANDARD_POSITIONS[n])

function distanceToStrip(p: Position): number {
  let best = Infinity
  for (const c of SENSORIMOTOR_CENTRES) best = Math.min(best, Math.acos(Math.max(-1, Math.min(1, p.x * c.x + p.y * c.y + p.z * c.z))))
  return best
}

/** All names the simulator can place, nearest the C3/Cz/C4 strip first (10-10 before 10-5). */
function orderedSites(): string[] {
  const tenTen = Object.keys(STANDARD_POSITIONS).filter((n) => !REFERENCE_SITES.has(n))
  const byStrip = (names: string[], table: (n: string) => Position) =>
    [...names].sort((a, b) => distanceToStrip(table(a)) - distanceToStrip(table(b)) || a.localeCompare(b))
  return [...byStrip(tenTen, (n) => STANDARD_POSITIONS[n]), ...byStrip([...HALF_SITES.keys()], (n) => HALF_SITES.get(n)!)]
}

const ORDERED_SITES = orderedSites()
export const MAX_SIMULATED_CHANNELS = ORDERED_SITES.length

/** `count` electrode sites around C3/Cz/C4 (e.g. 22 for a typical motor-imagery cap). */
export function sensorimotorChannels(count: number): ChannelPosition[] {
  if (!Number.isInteger(count) || count < 1 || count > MAX_SIMULATED_CHANNELS) {
    throw new Error(`channel count must be an integer from 1 to ${MAX_SIMULATED_CHANNELS}, got ${count}`)
  }
  return ORDERED_SITES.slice(0, count).map((name) => ({ name, ...simulatorPositionFor(name)! }))
}

/**
 * Channels with positions from names or from montage entries. Names must be sites the
 * simulator knows; entries with positions (e.g. from a montage CSV) are used as given.
 */
export function resolveChannels(channels: readonly (string | ChannelPosition)[]): ChannelPosition[] {
  if (channels.length === 0) throw new Error('a simulated device needs at least one channel')
  const seen = new Set<string>()
  return channels.map((entry) => {
    const name = typeof entry === 'string' ? entry : entry.name
    if (seen.has(name)) throw new Error(`channel ${name} is listed twice`)
    seen.add(name)
    if (typeof entry !== 'string') return { ...entry }
    const p = simulatorPositionFor(name)
    if (!p) throw new Error(`channel '${name}' is not a 10-20/10-10/10-5 site the simulator can place; pass its position (montage CSV) instead`)
    return { name, x: p.x, y: p.y, z: p.z }
  })
}
