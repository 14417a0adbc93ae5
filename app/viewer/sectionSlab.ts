/**
 * The section slab: a plane (point, unit normal) and a thickness; points within thickness / 2 of the plane
 * stay. As clipping planes it is two planes facing each other; three keeps a point where a plane's signed
 * distance is >= 0. Scene frame, metres, Z up. Also the plane's own 2D axes: u horizontal in the plane,
 * v = n × u (up the plane for a vertical section), as the section figures label them.
 */
import * as THREE from 'three'
import type { SectionSlab, Vec3 } from './types'

/** Below this horizontal distance two points do not define a vertical plane. */
export const MIN_SECTION_SPAN = 0.001

/** The vertical plane through two points (normal horizontal, to the left of a → b), or null when they coincide in plan. */
export function verticalSlabThrough(a: Vec3, b: Vec3, thickness: number): SectionSlab | null {
  const dx = b[0] - a[0]
  const dy = b[1] - a[1]
  const span = Math.hypot(dx, dy)
  if (span < MIN_SECTION_SPAN) return null
  return {
    point: [(a[0] + b[0]) / 2, (a[1] + b[1]) / 2, (a[2] + b[2]) / 2],
    normal: [-dy / span, dx / span, 0],
    thickness,
  }
}

/** Checks and normalises a slab typed in by hand: an error message, or the slab with a unit normal. */
export function normaliseSlab(slab: SectionSlab): SectionSlab | string {
  if (![...slab.point, ...slab.normal, slab.thickness].every(Number.isFinite)) return 'Every value must be a number.'
  const length = Math.hypot(...slab.normal)
  if (length < 1e-9) return 'The normal must not be zero.'
  if (!(slab.thickness > 0)) return 'The thickness must be above zero.'
  return { point: [...slab.point], normal: [slab.normal[0] / length, slab.normal[1] / length, slab.normal[2] / length], thickness: slab.thickness }
}

/** The two clipping planes in the render frame (scene minus `origin`). */
export function slabPlanes(slab: SectionSlab, origin: Vec3, out: [THREE.Plane, THREE.Plane]): [THREE.Plane, THREE.Plane] {
  const n = new THREE.Vector3(...slab.normal)
  const p = new THREE.Vector3(slab.point[0] - origin[0], slab.point[1] - origin[1], slab.point[2] - origin[2])
  const half = slab.thickness / 2
  // n·x - n·p + half >= 0 and -n·x + n·p + half >= 0: |n·(x - p)| <= half.
  out[0].set(n, -n.dot(p) + half)
  out[1].set(n.clone().negate(), n.dot(p) + half)
  return out
}

/** The plane's axes: u horizontal (or along X for a horizontal plane), v = n × u. */
export function slabAxes(normal: Vec3): { u: THREE.Vector3; v: THREE.Vector3 } {
  const n = new THREE.Vector3(...normal).normalize()
  const up = Math.abs(n.z) > 0.999 ? new THREE.Vector3(1, 0, 0) : new THREE.Vector3(0, 0, 1)
  const u = new THREE.Vector3().crossVectors(up, n).normalize()
  const v = new THREE.Vector3().crossVectors(n, u).normalize()
  return { u, v }
}

/** A rectangle in the plane's (u, v) axes, metres from the slab's point. */
export interface PlaneExtent {
  uMin: number
  uMax: number
  vMin: number
  vMax: number
}

/** Grows an extent by a share of its size on every side, and to at least `minHalf` each way. */
export function padExtent(e: PlaneExtent, share: number, minHalf: number): PlaneExtent {
  const du = Math.max((e.uMax - e.uMin) * share, minHalf - (e.uMax - e.uMin) / 2, 0)
  const dv = Math.max((e.vMax - e.vMin) * share, minHalf - (e.vMax - e.vMin) / 2, 0)
  return { uMin: e.uMin - du, uMax: e.uMax + du, vMin: e.vMin - dv, vMax: e.vMax + dv }
}

/** The slab drawn as two outlines (its faces) in the section colour. */
export class SlabOutline {
  readonly object: THREE.LineSegments
  private material = new THREE.LineBasicMaterial({ color: '#C7A0E8', transparent: true, opacity: 0.7, depthTest: true })

  constructor() {
    this.object = new THREE.LineSegments(new THREE.BufferGeometry(), this.material)
    this.object.visible = false
    this.object.frustumCulled = false
  }

  /** `extent`: the outline's rectangle in the plane's axes, metres from the slab's point. */
  show(slab: SectionSlab | null, origin: Vec3, extent: PlaneExtent): void {
    if (!slab) {
      this.object.visible = false
      return
    }
    const { u, v } = slabAxes(slab.normal)
    const n = new THREE.Vector3(...slab.normal)
    const uMid = (extent.uMin + extent.uMax) / 2
    const vMid = (extent.vMin + extent.vMax) / 2
    const halfU = (extent.uMax - extent.uMin) / 2
    const halfV = (extent.vMax - extent.vMin) / 2
    const centre = new THREE.Vector3(slab.point[0] - origin[0], slab.point[1] - origin[1], slab.point[2] - origin[2])
      .addScaledVector(u, uMid)
      .addScaledVector(v, vMid)
    const vertices: number[] = []
    for (const side of [-1, 1]) {
      const c = centre.clone().addScaledVector(n, (side * slab.thickness) / 2)
      const corners = [
        [-1, -1],
        [1, -1],
        [1, 1],
        [-1, 1],
      ].map(([a, b]) => c.clone().addScaledVector(u, a! * halfU).addScaledVector(v, b! * halfV))
      for (let i = 0; i < 4; i++) {
        const p = corners[i]!
        const q = corners[(i + 1) % 4]!
        vertices.push(p.x, p.y, p.z, q.x, q.y, q.z)
      }
    }
    this.object.geometry.dispose()
    const geometry = new THREE.BufferGeometry()
    geometry.setAttribute('position', new THREE.Float32BufferAttribute(vertices, 3))
    this.object.geometry = geometry
    this.object.visible = true
  }

  dispose(): void {
    this.object.geometry.dispose()
    this.material.dispose()
  }
}
