/**
 * Which of a tile's points a placement's trims hide or light, by the one rule every reader of points uses
 * (shared/measure/trims.ts `trimMask`: kept when inside at least one keep trim, or there is none, and inside no
 * cut trim). Trims here are in the scan's own frame (trimToFrame with the placement's inverse matrix), so the
 * states stay right while the placement moves and are computed again only when the trims change.
 *
 * States (one byte per point, the shader's `trimState`): 0 shown as it is, 1 cut by a scene cut, 2 kept by the
 * open object, 3 left out by the open object's trims.
 */
import { invertRigid } from '@shared/geometry/rigidTransform'
import { trimToFrame } from '@shared/geometry/trimFrame'
import { trimMask } from '@shared/measure/trims'
import type { TrimMode, TrimShape } from '@shared/schemas'
import type { Vec3 } from './types'

export const TRIM_STATE = { shown: 0, cut: 1, kept: 2, left: 3 } as const

export interface ScanFrameTrim {
  mode: TrimMode
  shape: TrimShape
}

/** What one placement shows: its scene cuts, and the open object's trims of it (null when it is not a member). */
export interface PlacementTrims {
  cuts: readonly ScanFrameTrim[]
  member: readonly ScanFrameTrim[] | null
}

export function hasTrims(t: PlacementTrims | null | undefined): t is PlacementTrims {
  return !!t && (t.cuts.length > 0 || t.member !== null)
}

/** Trims as the API gives them (scene frame) into a placement's scan frame, by the inverse of its matrix. */
export function toScanFrame(trims: readonly ScanFrameTrim[], matrix: readonly number[]): ScanFrameTrim[] {
  if (trims.length === 0) return []
  const back = invertRigid(matrix)
  return trims.map((t) => ({ mode: t.mode, shape: trimToFrame(t.shape, back) }))
}

/** A tile's points in the scan frame, float64: the node's centre plus the float32 offsets. */
function scanPoints(origin: Vec3, positions: Float32Array, count: number): Float64Array {
  const xyz = new Float64Array(count * 3)
  for (let i = 0; i < count * 3; i += 3) {
    xyz[i] = origin[0] + positions[i]!
    xyz[i + 1] = origin[1] + positions[i + 1]!
    xyz[i + 2] = origin[2] + positions[i + 2]!
  }
  return xyz
}

/** The states of a tile's points under a placement's trims. */
export function trimStates(origin: Vec3, positions: Float32Array, count: number, trims: PlacementTrims): Uint8Array {
  const xyz = scanPoints(origin, positions, count)
  const states = new Uint8Array(count)
  const cutsKeep = trims.cuts.length > 0 ? trimMask(xyz, trims.cuts) : null
  const memberKeep = trims.member ? trimMask(xyz, trims.member) : null
  for (let i = 0; i < count; i++) {
    if (cutsKeep && cutsKeep[i] === 0) states[i] = TRIM_STATE.cut
    else if (memberKeep) states[i] = memberKeep[i] ? TRIM_STATE.kept : TRIM_STATE.left
  }
  return states
}
