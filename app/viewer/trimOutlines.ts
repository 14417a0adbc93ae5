/**
 * Trims drawn as outlines over the points (scene frame in, render frame on the GPU): a box by its twelve edges,
 * "cut below" by a level rectangle across the scene at its height, a prism by its outline at both ends of its
 * sweep and the edges joining them (an unbounded one is drawn across its placement's extent). Keep trims in moss,
 * cut trims in brick, both bright enough for the charcoal viewport; drawn on top of the points (no depth test)
 * so a trim inside a cloud still reads. Also the outline being drawn on the screen: its corners so far.
 */
import * as THREE from 'three'
import type { TrimMode, TrimShape } from '@shared/schemas'
import type { Vec3 } from './types'

export const TRIM_COLOURS: Record<TrimMode, string> = { keep: '#8CC26B', cut: '#E8765C' }
const DRAFT_COLOUR = '#EBC77E'

export interface TrimOutline {
  id: string
  mode: TrimMode
  shape: TrimShape
  /** The placement it trims: an unbounded shape is drawn across that placement's extent (else the scene's). */
  instanceId?: string
}

/** The twelve edges of a box (scene frame), as pairs of corners. */
export function boxEdges(shape: Extract<TrimShape, { shape: 'box' }>): Vec3[] {
  const q = new THREE.Quaternion(...shape.rotation)
  const c = new THREE.Vector3(...shape.centre)
  const corner = (i: number) =>
    new THREE.Vector3(((i & 1 ? 1 : -1) * shape.size[0]) / 2, ((i & 2 ? 1 : -1) * shape.size[1]) / 2, ((i & 4 ? 1 : -1) * shape.size[2]) / 2).applyQuaternion(q).add(c)
  const out: Vec3[] = []
  for (let i = 0; i < 8; i++) {
    for (const bit of [1, 2, 4]) {
      if (i & bit) continue
      const a = corner(i), b = corner(i | bit)
      out.push([a.x, a.y, a.z], [b.x, b.y, b.z])
    }
  }
  return out
}

/** Two unit axes at right angles to a normal (any pair will do for drawing). */
function axesAcross(n: THREE.Vector3): [THREE.Vector3, THREE.Vector3] {
  const helper = Math.abs(n.z) > 0.9 ? new THREE.Vector3(1, 0, 0) : new THREE.Vector3(0, 0, 1)
  const a = new THREE.Vector3().crossVectors(helper, n).normalize()
  return [a, new THREE.Vector3().crossVectors(n, a).normalize()]
}

/** Edges of a shape (scene frame), given the scene's centre and radius for the unbounded ones. */
export function trimEdges(shape: TrimShape, centre: Vec3, radius: number): Vec3[] {
  if (shape.shape === 'box') return boxEdges(shape)
  const c = new THREE.Vector3(...centre)
  if (shape.shape === 'below') {
    const up = new THREE.Vector3(...shape.up).normalize()
    const p = new THREE.Vector3(...shape.point)
    // The plane's point nearest the scene's centre, a square across the scene.
    const onPlane = c.clone().sub(up.clone().multiplyScalar(c.clone().sub(p).dot(up)))
    const [a, b] = axesAcross(up)
    const r = radius * 1.1
    const corners = [[-1, -1], [1, -1], [1, 1], [-1, 1]].map(([s, t]) => onPlane.clone().addScaledVector(a, s! * r).addScaledVector(b, t! * r))
    const out: Vec3[] = []
    for (let i = 0; i < 4; i++) {
      const x = corners[i]!, y = corners[(i + 1) % 4]!
      out.push([x.x, x.y, x.z], [y.x, y.y, y.z])
    }
    // A cross marks the side that is cut (below): short ticks pointing down from the rectangle's corners.
    for (const x of corners) {
      const y = x.clone().addScaledVector(up, -r * 0.08)
      out.push([x.x, x.y, x.z], [y.x, y.y, y.z])
    }
    return out
  }
  const u = new THREE.Vector3(...shape.u).normalize()
  const v = new THREE.Vector3(...shape.v).normalize()
  const n = new THREE.Vector3().crossVectors(u, v).normalize()
  const o = new THREE.Vector3(...shape.origin)
  const along = c.clone().sub(o).dot(n)
  const near = shape.near ?? along - radius
  const far = shape.far ?? along + radius
  const ring = (d: number) => shape.outline.map(([a, b]) => o.clone().addScaledVector(u, a).addScaledVector(v, b).addScaledVector(n, d))
  const lo = ring(near), hi = ring(far)
  const out: Vec3[] = []
  for (let i = 0; i < lo.length; i++) {
    const j = (i + 1) % lo.length
    for (const [x, y] of [[lo[i]!, lo[j]!], [hi[i]!, hi[j]!], [lo[i]!, hi[i]!]] as const) out.push([x.x, x.y, x.z], [y.x, y.y, y.z])
  }
  return out
}

export class TrimOutlines {
  readonly object = new THREE.Group()
  private materials: Record<TrimMode | 'draft', THREE.LineBasicMaterial> = {
    keep: this.material(TRIM_COLOURS.keep),
    cut: this.material(TRIM_COLOURS.cut),
    draft: this.material(DRAFT_COLOUR),
  }
  private shown: TrimOutline[] = []
  private draft: Vec3[] = []

  constructor(
    private toRender: (p: Vec3) => THREE.Vector3,
    private extent: (instanceId?: string) => { centre: Vec3; radius: number },
  ) {
    this.object.renderOrder = 5
  }

  /** Draws exactly these trims (scene frame). */
  set(trims: readonly TrimOutline[]): void {
    this.shown = [...trims]
    this.rebuild()
  }

  /** The outline being drawn: its corners so far (scene frame), as an open polyline; empty clears it. */
  setDraft(corners: readonly Vec3[]): void {
    this.draft = [...corners]
    this.rebuild()
  }

  /** Again after the render origin or the scene's extent changed. */
  rebuild(): void {
    this.clear()
    for (const t of this.shown) {
      const { centre, radius } = this.extent(t.instanceId)
      this.add(trimEdges(t.shape, centre, radius), this.materials[t.mode])
    }
    if (this.draft.length > 1) {
      const pairs: Vec3[] = []
      for (let i = 0; i + 1 < this.draft.length; i++) pairs.push(this.draft[i]!, this.draft[i + 1]!)
      this.add(pairs, this.materials.draft)
    }
  }

  get count(): number {
    return this.shown.length
  }

  dispose(): void {
    this.clear()
    for (const m of Object.values(this.materials)) m.dispose()
    this.object.removeFromParent()
  }

  private material(colour: string): THREE.LineBasicMaterial {
    return new THREE.LineBasicMaterial({ color: colour, depthTest: false, depthWrite: false, transparent: true, opacity: 0.95 })
  }

  private add(pairs: readonly Vec3[], material: THREE.LineBasicMaterial): void {
    if (pairs.length === 0) return
    const positions = new Float32Array(pairs.length * 3)
    pairs.forEach((p, i) => {
      const r = this.toRender(p)
      positions.set([r.x, r.y, r.z], i * 3)
    })
    const geometry = new THREE.BufferGeometry()
    geometry.setAttribute('position', new THREE.BufferAttribute(positions, 3))
    const lines = new THREE.LineSegments(geometry, material)
    lines.frustumCulled = false
    lines.renderOrder = 5
    this.object.add(lines)
  }

  private clear(): void {
    for (const child of [...this.object.children]) {
      ;(child as THREE.LineSegments).geometry.dispose()
      this.object.remove(child)
    }
  }
}
