/**
 * Shapes in the scene frame (metres, Z up) that the marker kinds draw with: points of a section's plane,
 * rings placed in it, an angle's arc. Pure functions, unit-tested; they know no marker kind.
 */
import type { SectionFrame } from '@shared/schemas'
import type { Vec3 } from '@/viewer/types'

/** Off the points; also the free opening's outline, as the section figures draw it. */
export const BRICK = '#B4442E'

export function add(a: Vec3, b: Vec3, s = 1): Vec3 {
  return [a[0] + b[0] * s, a[1] + b[1] * s, a[2] + b[2] * s]
}
export function sub(a: Vec3, b: Vec3): Vec3 {
  return [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
function dot(a: Vec3, b: Vec3): number {
  return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
function cross(a: Vec3, b: Vec3): Vec3 {
  return [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
}
function norm(a: Vec3): number {
  return Math.hypot(a[0], a[1], a[2])
}
function unit(a: Vec3): Vec3 | null {
  const n = norm(a)
  return n < 1e-12 ? null : [a[0] / n, a[1] / n, a[2] / n]
}

/** A point of the section plane from its (u, v) coordinates, metres from the frame's origin. */
export function planePoint(frame: SectionFrame, u: number, v: number): Vec3 {
  return add(add(frame.origin, frame.u, u), frame.v, v)
}

/** A flat u v ring [u0, v0, u1, v1, ...] placed in its plane. */
export function ringInPlane(frame: SectionFrame, ring: readonly number[]): Vec3[] {
  const out: Vec3[] = []
  for (let i = 0; i + 1 < ring.length; i += 2) out.push(planePoint(frame, ring[i]!, ring[i + 1]!))
  return out
}

/** The rectangle of the plane over the section's extents, corners counter-clockwise in (u, v). */
export function sectionRectangle(frame: SectionFrame, e: { uMin: number; uMax: number; vMin: number; vMax: number }): Vec3[] {
  return [planePoint(frame, e.uMin, e.vMin), planePoint(frame, e.uMax, e.vMin), planePoint(frame, e.uMax, e.vMax), planePoint(frame, e.uMin, e.vMax)]
}

/**
 * The angle's arc at vertex b from arm b→a to arm b→c, `radius` metres out, as a polyline of `segments`
 * chords. A straight angle (a, b, c in line) has no plane of its own: the arc is drawn in the plane that
 * holds the arm and the vertical (or X for a vertical arm). Empty when an arm has no length or the angle is 0.
 */
export function arcPoints(a: Vec3, b: Vec3, c: Vec3, radius: number, segments = 24): Vec3[] {
  const ua = unit(sub(a, b))
  const uc = unit(sub(c, b))
  if (!ua || !uc) return []
  const theta = Math.atan2(norm(cross(ua, uc)), dot(ua, uc))
  if (theta < 1e-6) return []
  let perp = unit(sub(uc, [ua[0] * dot(ua, uc), ua[1] * dot(ua, uc), ua[2] * dot(ua, uc)]))
  if (!perp) {
    const helper: Vec3 = Math.abs(ua[2]) > 0.9 ? [1, 0, 0] : [0, 0, 1]
    perp = unit(cross(cross(ua, helper), ua))!
  }
  const out: Vec3[] = []
  for (let i = 0; i <= segments; i++) {
    const t = (theta * i) / segments
    out.push(add(add(b, ua, radius * Math.cos(t)), perp, radius * Math.sin(t)))
  }
  return out
}

/** The arc's radius: a third of the shorter arm, so it sits well inside both. */
export function arcRadius(a: Vec3, b: Vec3, c: Vec3): number {
  return Math.min(norm(sub(a, b)), norm(sub(c, b))) / 3
}

export function centroid(points: readonly Vec3[]): Vec3 {
  const s: Vec3 = [0, 0, 0]
  for (const p of points) (s[0] += p[0]), (s[1] += p[1]), (s[2] += p[2])
  const n = Math.max(points.length, 1)
  return [s[0] / n, s[1] / n, s[2] / n]
}

/** Top middle of a ring in its plane: where a section's or a clearance's label stands. */
export function topOf(frame: SectionFrame, ring: readonly number[]): Vec3 | null {
  if (ring.length < 2) return null
  let uMin = Infinity, uMax = -Infinity, vMax = -Infinity
  for (let i = 0; i + 1 < ring.length; i += 2) {
    uMin = Math.min(uMin, ring[i]!)
    uMax = Math.max(uMax, ring[i]!)
    vMax = Math.max(vMax, ring[i + 1]!)
  }
  return planePoint(frame, (uMin + uMax) / 2, vMax)
}

