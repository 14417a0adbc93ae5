/**
 * Which octree nodes to draw (level of detail, common practice: coarse to fine until the on-screen spacing falls below a
 * pixel threshold), within a drawing limit, over every visible placement at once.
 *
 * Rule, per frame or camera change:
 * - The root and level 1 of every placement are always wanted first (whatever the camera sees), so a view of
 *   the whole scene appears at once and turning never shows a void.
 * - Below them a node is a candidate when its parent is loaded, looks coarse on screen (its estimated point
 *   spacing, edge / sqrt(points) projected, is above `spacingPx`), and its bounding sphere is inside the view
 *   frustum and touches the section slab if one is set.
 * - Candidates are taken biggest projected size first (screen-space size: edge / distance × the screen's
 *   height in pixels over 2 tan(fov / 2); for an orthographic camera edge × pixels per metre) until the next one
 *   would pass the budget. The budget counts every taken node, loaded or not, so what is drawn (taken and
 *   loaded) never exceeds it.
 * Space: the render frame (scene frame minus the render origin, see README).
 */
import * as THREE from 'three'
import { MaxHeap } from './priorityQueue'
import type { ScanTree, TreeNode } from './ScanTree'

export interface LodTree<Owner> {
  owner: Owner
  tree: ScanTree
  /** Scan frame to render frame. */
  world: THREE.Matrix4
  isLoaded(node: TreeNode): boolean
}

export interface LodView {
  camera: THREE.PerspectiveCamera | THREE.OrthographicCamera
  /** Viewport height, CSS pixels. */
  heightPx: number
  /** Render-frame planes a point must be on the positive side of (the section slab), if any. */
  planes?: readonly THREE.Plane[] | null
}

export interface LodOptions {
  budget: number
  /** Refine while a node's estimated point spacing on screen is above this many pixels. */
  spacingPx: number
}

export interface LodPick<Owner> {
  owner: Owner
  node: TreeNode
  priority: number
  loaded: boolean
}

export interface LodResult<Owner> {
  picks: LodPick<Owner>[]
  /** Points of every taken node (loaded or not); never above the budget. */
  points: number
}

// Priorities that put the always-wanted levels ahead of everything else, root before level 1.
const FLOOR_BONUS = [2e12, 1e12]

const _frustum = new THREE.Frustum()
const _projScreen = new THREE.Matrix4()
const _centre = new THREE.Vector3()
const _sphere = new THREE.Sphere()

/** Pixels a length of one metre covers at distance one metre (perspective), or anywhere (orthographic). */
export function pixelsPerMetre(camera: THREE.PerspectiveCamera | THREE.OrthographicCamera, heightPx: number): number {
  if ((camera as THREE.OrthographicCamera).isOrthographicCamera) {
    const ortho = camera as THREE.OrthographicCamera
    return (heightPx * ortho.zoom) / (ortho.top - ortho.bottom)
  }
  const persp = camera as THREE.PerspectiveCamera
  return heightPx / (2 * Math.tan(THREE.MathUtils.degToRad(persp.fov) / 2))
}

export function selectNodes<Owner>(trees: readonly LodTree<Owner>[], view: LodView, options: LodOptions): LodResult<Owner> {
  const { camera } = view
  const ortho = (camera as THREE.OrthographicCamera).isOrthographicCamera === true
  camera.updateMatrixWorld()
  _projScreen.multiplyMatrices(camera.projectionMatrix, camera.matrixWorldInverse)
  _frustum.setFromProjectionMatrix(_projScreen)
  const camPos = camera.position
  const ppm = pixelsPerMetre(camera, view.heightPx)
  const planes = view.planes ?? null

  /** Projected size in pixels and whether the node can be seen; centre left in _centre. */
  const measure = (tree: LodTree<Owner>, node: TreeNode): number => {
    _centre.set(node.centre[0], node.centre[1], node.centre[2]).applyMatrix4(tree.world)
    if (ortho) return node.edge * ppm
    // Inside the sphere the node fills the view: rank it by its edge over a small distance.
    const distance = Math.max(_centre.distanceTo(camPos), node.radius * 0.25, 1e-6)
    return (node.edge / distance) * ppm
  }
  const visible = (node: TreeNode): boolean => {
    _sphere.set(_centre, node.radius)
    if (!_frustum.intersectsSphere(_sphere)) return false
    if (planes) for (const plane of planes) if (plane.distanceToPoint(_centre) < -node.radius) return false
    return true
  }

  const heap = new MaxHeap<{ tree: LodTree<Owner>; node: TreeNode; projected: number }>()
  for (const tree of trees) {
    const root = tree.tree.root
    if (!root) continue
    heap.push({ tree, node: root, projected: measure(tree, root) }, FLOOR_BONUS[0]! + measure(tree, root))
    for (const child of root.children) {
      const projected = measure(tree, child)
      heap.push({ tree, node: child, projected }, FLOOR_BONUS[1]! + projected)
    }
  }

  const picks: LodPick<Owner>[] = []
  let points = 0
  for (let item = heap.pop(); item; item = heap.pop()) {
    const { tree, node, projected } = item.value
    const floor = node.level <= 1
    if (points + node.pointCount > options.budget) {
      // A floor node too big for what is left may still leave room for a smaller one; past the floor the
      // rest are all smaller on screen, so the walk ends.
      if (floor) continue
      break
    }
    const loaded = tree.isLoaded(node)
    picks.push({ owner: tree.owner, node, priority: item.priority, loaded })
    points += node.pointCount
    if (!loaded || node.children.length === 0) continue
    if (node.level >= 1) {
      const spacing = projected / Math.sqrt(Math.max(node.pointCount, 1))
      if (spacing <= options.spacingPx) continue
    }
    for (const child of node.children) {
      if (child.level <= 1) continue // already queued as a floor node
      const childProjected = measure(tree, child)
      if (!visible(child)) continue
      heap.push({ tree, node: child, projected: childProjected }, childProjected)
    }
  }
  return { picks, points }
}
