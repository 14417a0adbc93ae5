/**
 * Picking a stored point under the cursor from the tiles drawn now (CPU, no GPU read-back).
 *
 * Rule: a point is a candidate when its image lies within `tolerancePx` CSS pixels of the cursor, it is in
 * front of the camera, and it is inside the section slab (if any). The front surface wins: of the candidates,
 * those no deeper than the front-most one plus a depth window (1 % of its depth, at least 2 cm) count as the
 * surface under the cursor, and of those the one whose image is nearest the cursor is picked. So a click on a
 * wall picks the wall's point under the cursor, not a point 6 px away that happens to be a hair nearer, and
 * never a point seen through the wall. A point a scene cut takes away is never a candidate (hidden or dimmed).
 *
 * Work: a cone test in each node's own frame (rigid, so distances hold): the ray is moved into the node's
 * frame once, then per point a dot product and a comparison with the cone's radius at that depth; only points
 * inside the cone (with a little margin) are projected exactly. Nodes whose sphere misses the cone are skipped.
 * Space: the render frame (see README); depths are metres along the view ray.
 */
import * as THREE from 'three'
import type { TileEntry } from './TileCache'
import { TRIM_STATE } from './trimStates'
import type { ViewInstance } from './ViewInstance'

export interface PickTarget {
  instance: ViewInstance
  entry: TileEntry
  object: THREE.Points
  /** The points' trim states (trimStates.ts), or null: a point a scene cut takes away is never picked. */
  states?: Uint8Array | null
}

export interface PickHit {
  target: PickTarget
  index: number
  /** Render frame. */
  render: THREE.Vector3
  depth: number
  pixelDistance: number
}

export interface PickView {
  camera: THREE.PerspectiveCamera | THREE.OrthographicCamera
  width: number
  height: number
  planes?: readonly THREE.Plane[] | null
}

const _ray = new THREE.Ray()
const _local = new THREE.Ray()
const _inverse = new THREE.Matrix4()
const _ndc = new THREE.Vector2()
const _raycaster = new THREE.Raycaster()
const _p = new THREE.Vector3()
const _projected = new THREE.Vector3()
const _centre = new THREE.Vector3()

/** Depth window of the front surface: 1 % of the depth, at least 2 cm. */
function frontWindow(depth: number): number {
  return Math.max(0.02, depth * 0.01)
}

export function pickPoint(targets: Iterable<PickTarget>, view: PickView, cursorX: number, cursorY: number, tolerancePx: number): PickHit | null {
  const { camera, width, height } = view
  if (width <= 0 || height <= 0) return null
  const ortho = (camera as THREE.OrthographicCamera).isOrthographicCamera === true
  camera.updateMatrixWorld()
  _ndc.set((cursorX / width) * 2 - 1, -(cursorY / height) * 2 + 1)
  _raycaster.setFromCamera(_ndc, camera)
  _ray.copy(_raycaster.ray)
  // The cone's radius at depth t: slope * t + base (perspective: base 0; orthographic: slope 0).
  let slope = 0
  let base = 0
  if (ortho) {
    const o = camera as THREE.OrthographicCamera
    base = (tolerancePx * (o.top - o.bottom)) / o.zoom / height
  } else {
    const p = camera as THREE.PerspectiveCamera
    // Per pixel at the centre; towards the corners a pixel spans slightly less, so the exact check below decides.
    slope = (tolerancePx * 2 * Math.tan(THREE.MathUtils.degToRad(p.fov) / 2)) / height
  }
  const margin = 1.3
  // The orthographic ray starts on the near plane already.
  const near = ortho ? 0 : camera.near
  const planes = view.planes ?? null
  const tol2 = tolerancePx * tolerancePx

  const candidates: PickHit[] = []
  for (const target of targets) {
    const { object, entry } = target
    const world = object.matrixWorld
    // Node sphere against the cone.
    _centre.setFromMatrixPosition(world)
    const radius = object.geometry.boundingSphere?.radius ?? Infinity
    const tc = _p.copy(_centre).sub(_ray.origin).dot(_ray.direction)
    if (tc + radius < near) continue
    const distToRay = _ray.distanceToPoint(_centre)
    if (distToRay > radius + (slope * Math.max(tc + radius, 0) + base) * margin) continue

    _inverse.copy(world).invert()
    _local.copy(_ray).applyMatrix4(_inverse)
    const ox = _local.origin.x, oy = _local.origin.y, oz = _local.origin.z
    const dx = _local.direction.x, dy = _local.direction.y, dz = _local.direction.z
    const positions = entry.positions
    const count = entry.count
    const states = target.states ?? null
    for (let i = 0, j = 0; i < count; i++, j += 3) {
      if (states !== null && states[i] === TRIM_STATE.cut) continue
      const vx = positions[j]! - ox
      const vy = positions[j + 1]! - oy
      const vz = positions[j + 2]! - oz
      const t = vx * dx + vy * dy + vz * dz
      if (t < near) continue
      const r = (slope * t + base) * margin
      const perp2 = vx * vx + vy * vy + vz * vz - t * t
      if (perp2 > r * r) continue
      _p.set(positions[j]!, positions[j + 1]!, positions[j + 2]!).applyMatrix4(world)
      if (planes && planes.some((plane) => plane.distanceToPoint(_p) < 0)) continue
      _projected.copy(_p).project(camera)
      if (_projected.z < -1 || _projected.z > 1) continue
      const sx = ((_projected.x + 1) / 2) * width - cursorX
      const sy = ((1 - _projected.y) / 2) * height - cursorY
      const d2 = sx * sx + sy * sy
      if (d2 > tol2) continue
      candidates.push({ target, index: i, render: _p.clone(), depth: t, pixelDistance: Math.sqrt(d2) })
    }
  }
  if (candidates.length === 0) return null
  let front = Infinity
  for (const c of candidates) if (c.depth < front) front = c.depth
  const limit = front + frontWindow(front)
  let best: PickHit | null = null
  for (const c of candidates) {
    if (c.depth > limit) continue
    if (!best || c.pixelDistance < best.pixelDistance || (c.pixelDistance === best.pixelDistance && c.depth < best.depth)) best = c
  }
  return best
}
