// Forward model: how a current dipole inside the head shows up as a potential at each
// electrode. We use the potential of a current dipole in an infinite homogeneous conductor,
//
//     V(r) = p · (r − r0) / (4π σ |r − r0|³)
//
// (Malmivuo & Plonsey 1995, Bioelectromagnetism, Oxford Univ. Press, ch. 8; Nunez &
// Srinivasan 2006, Electric Fields of the Brain, 2nd ed., ch. 4 — cited from memory). It
// ignores the skull's smearing, which is why sources sit a few centimetres deep: the
// patterns are then about as wide as measured scalp patterns of sensorimotor rhythms. The
// potential is referenced to infinity; 'average' re-references to the mean of the montage.
import type { Position } from '../app/engine/montage'

/** Radius of the idealised head, metres (an adult head is about 9 cm in radius; common practice). */
export const HEAD_RADIUS_M = 0.09
/** Conductivity of brain tissue, S/m (about 0.33 S/m; common practice, from memory). */
export const CONDUCTIVITY_S_PER_M = 0.33

export interface Vector3 {
  x: number
  y: number
  z: number
}

export interface Dipole {
  /** Location in metres, head-centred (x right, y nose, z up, as the montage module). */
  location: Vector3
  /** Moment in ampere-metres. */
  moment: Vector3
}

/** Potential in volts at `electrode` (metres) of a dipole in an infinite homogeneous medium. */
export function dipolePotentialV(dipole: Dipole, electrode: Vector3, conductivity = CONDUCTIVITY_S_PER_M): number {
  const dx = electrode.x - dipole.location.x
  const dy = electrode.y - dipole.location.y
  const dz = electrode.z - dipole.location.z
  const distance = Math.sqrt(dx * dx + dy * dy + dz * dz)
  if (distance < 1e-6) throw new Error('electrode coincides with the dipole; the potential is undefined there')
  const dot = dipole.moment.x * dx + dipole.moment.y * dy + dipole.moment.z * dz
  return dot / (4 * Math.PI * conductivity * distance * distance * distance)
}

/** An electrode on the scalp of the idealised head, from a unit-sphere montage position. */
export function scalpPointM(unit: Position): Vector3 {
  const n = Math.hypot(unit.x, unit.y, unit.z)
  if (!(n > 0)) throw new Error('electrode position is the zero vector')
  return { x: (unit.x / n) * HEAD_RADIUS_M, y: (unit.y / n) * HEAD_RADIUS_M, z: (unit.z / n) * HEAD_RADIUS_M }
}

/** The point `depthM` metres below the scalp, under a unit-sphere site, on the line to the centre. */
export function pointBeneath(unit: Position, depthM: number): Vector3 {
  const scalp = scalpPointM(unit)
  const scale = (HEAD_RADIUS_M - depthM) / HEAD_RADIUS_M
  return { x: scalp.x * scale, y: scalp.y * scale, z: scalp.z * scale }
}

export function unitVector(v: Vector3): Vector3 {
  const n = Math.hypot(v.x, v.y, v.z)
  if (!(n > 0)) throw new Error('direction is the zero vector')
  return { x: v.x / n, y: v.y / n, z: v.z / n }
}

/**
 * One leadfield column: microvolts at each electrode per nanoampere-metre of moment along
 * `direction`. Electrodes are unit-sphere positions; the result is referenced as asked.
 */
export function leadfieldColumnUvPerNam(
  location: Vector3,
  direction: Vector3,
  electrodes: readonly Position[],
  reference: 'infinity' | 'average' = 'infinity',
): Float64Array {
  const d = unitVector(direction)
  const dipole: Dipole = { location, moment: { x: d.x * 1e-9, y: d.y * 1e-9, z: d.z * 1e-9 } }
  const column = new Float64Array(electrodes.length)
  for (let i = 0; i < electrodes.length; i++) column[i] = dipolePotentialV(dipole, scalpPointM(electrodes[i])) * 1e6
  if (reference === 'average' && column.length > 0) {
    let mean = 0
    for (const v of column) mean += v
    mean /= column.length
    for (let i = 0; i < column.length; i++) column[i] -= mean
  }
  return column
}
