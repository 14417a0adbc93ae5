import type { Conn } from '../db'
import { latestAcceptedFits } from '../repositories/registrations'

/**
 * Which registration holds for each placement now. A placement's registration is its most recently
 * accepted fit (undone ones do not count), and only while the placement still has the matrix that
 * registration left: moved since by hand (the gizmo, the form, the live document) or by another
 * registration's undo, the figure no longer describes where it is, so the placement counts as not aligned.
 * The same holds when the placement it was aligned onto (the held one) has moved since: the two no longer
 * agree as the fit found them.
 */
export interface CurrentRegistration {
  registrationId: string
  rms: number | null
  rmsSource: 'check-points' | 'icp' | 'tie-points' | null
  /** Per-axis standard uncertainty for anchor budgets, metres (shared/measure/uncertainty.ts). */
  u: number | null
}

/** Matrices equal to this (element by element) are the same placement: they round-trip float8 exactly. */
export const SAME_MATRIX = 1e-9

export function sameMatrix(a: readonly number[] | null | undefined, b: readonly number[] | null | undefined): boolean {
  if (!a || !b || a.length !== 16 || b.length !== 16) return false
  for (let i = 0; i < 16; i++) if (!(Math.abs(a[i]! - b[i]!) <= SAME_MATRIX)) return false
  return true
}

export interface PlacementState {
  current: CurrentRegistration | null
  /** An accepted registration exists, but the placement has moved since. */
  movedSince: boolean
}

export async function registrationStates(db: Conn, sceneId: string, instances: readonly { id: string; matrix: number[] }[]): Promise<Map<string, PlacementState>> {
  const latest = new Map((await latestAcceptedFits(db, sceneId)).map((r) => [r.moving_instance_id, r]))
  const matrices = new Map(instances.map((i) => [i.id, i.matrix]))
  const out = new Map<string, PlacementState>()
  for (const i of instances) {
    const r = latest.get(i.id)
    // A held placement since removed from the scene: nothing left to disagree with.
    const held = r?.held_instance_id ? matrices.get(r.held_instance_id) : undefined
    const heldStill = !r?.held_matrix || held === undefined || sameMatrix(r.held_matrix, held)
    if (r && sameMatrix(r.matrix_after, i.matrix) && heldStill) out.set(i.id, { current: { registrationId: r.id, rms: r.rms, rmsSource: r.rms_source, u: r.registration_u }, movedSince: false })
    else out.set(i.id, { current: null, movedSince: r !== undefined })
  }
  return out
}
