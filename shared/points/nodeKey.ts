/**
 * Octree node keys and boxes, shared by the server (building, storing, searching) and the browser
 * (choosing what to load).
 *
 * Key scheme: 'r' is the root; each further character is one digit 0-7 naming a child, so 'r03' is child 3
 * of child 0 of the root and a key's level is its length minus one. The digit is bx + 2 by + 4 bz, where
 * b = 1 means the upper half of the parent along that axis. Half-open rule: along each axis a child takes
 * [min, mid) (b = 0) or [mid, max) (b = 1) of its parent, with mid = (min + max) / 2 in float64; the root's
 * upper faces are closed, so a point on a boundary belongs to exactly one node region.
 *
 * Units: metres, in the scan's own frame (Z up). Boxes are { min: [x, y, z], max: [x, y, z] }.
 */

export type Vec3 = [number, number, number]

export interface Box3 {
  min: Vec3
  max: Vec3
}

/** What the hierarchy says about one node (no points). */
export interface NodeInfo {
  key: string
  level: number
  bounds: Box3
  pointCount: number
}

export const ROOT_KEY = 'r'

/** The deepest level a key may name (the API accepts keys of up to 31 characters). */
export const MAX_LEVEL = 30

const KEY_PATTERN = /^r[0-7]{0,30}$/

export function isNodeKey(key: string): boolean {
  return KEY_PATTERN.test(key)
}

export function levelOfKey(key: string): number {
  return key.length - 1
}

/** The parent's key, or null for the root. */
export function parentKey(key: string): string | null {
  return key.length > 1 ? key.slice(0, -1) : null
}

export function childKey(key: string, octant: number): string {
  return key + String(octant)
}

/**
 * The box of child `octant` of `box`, by the half-open rule above. The midpoint is computed the same way
 * the builder classifies points, so boxes derived here match the builder's exactly.
 */
export function childBox(box: Box3, octant: number): Box3 {
  const min: Vec3 = [box.min[0], box.min[1], box.min[2]]
  const max: Vec3 = [box.max[0], box.max[1], box.max[2]]
  for (let axis = 0; axis < 3; axis++) {
    const mid = (box.min[axis]! + box.max[axis]!) / 2
    if ((octant >> axis) & 1) min[axis] = mid
    else max[axis] = mid
  }
  return { min, max }
}

export function copyBox(box: Box3): Box3 {
  return { min: [box.min[0], box.min[1], box.min[2]], max: [box.max[0], box.max[1], box.max[2]] }
}

/** The box's centre (the origin of its tile). */
export function boxCentre(box: Box3): Vec3 {
  return [(box.min[0] + box.max[0]) / 2, (box.min[1] + box.max[1]) / 2, (box.min[2] + box.max[2]) / 2]
}

/** Squared distance from a point to a closed box (0 inside). */
export function boxDistanceSquared(box: Box3, x: number, y: number, z: number): number {
  const dx = Math.max(box.min[0] - x, 0, x - box.max[0])
  const dy = Math.max(box.min[1] - y, 0, y - box.max[1])
  const dz = Math.max(box.min[2] - z, 0, z - box.max[2])
  return dx * dx + dy * dy + dz * dz
}

/** Whether two closed boxes overlap (touching counts). */
export function boxesOverlap(a: Box3, b: Box3): boolean {
  return (
    a.min[0] <= b.max[0] && b.min[0] <= a.max[0] &&
    a.min[1] <= b.max[1] && b.min[1] <= a.max[1] &&
    a.min[2] <= b.max[2] && b.min[2] <= a.max[2]
  )
}
