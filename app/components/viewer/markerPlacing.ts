/**
 * Placing a marker by clicks, whatever its kind: the clicks taken so far and the anchors they make. What each
 * kind takes, hints and previews is in its module (app/kinds). Pure functions (no Vue, no three.js), so they
 * are unit-tested. Points are in the scene frame (metres, Z up) as the viewer picks them.
 */
import type { Anchor } from '@shared/schemas'
import type { Vec3 } from '@/viewer/types'

/** A clicked stored point: the placement it lies on and where, scene frame. */
export interface Picked {
  instanceId: string
  point: Vec3
}

/**
 * Takes a click: appended while the marker needs more points; once it has them all, a further click
 * starts a new one (only the section panel waits with complete picks for its "Create section").
 */
export function addPick(picks: readonly Picked[], pick: Picked, needed: number): Picked[] {
  return picks.length >= needed ? [pick] : [...picks, pick]
}

export function anchorOf(p: Picked): Anchor {
  return { instanceId: p.instanceId, x: p.point[0], y: p.point[1], z: p.point[2] }
}

