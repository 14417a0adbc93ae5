/**
 * From markers (as the API gives them) to what the viewport draws: strokes, a fill, anchor dots and a label,
 * all in the scene frame (metres, Z up). The viewer (viewer/markerLayer.ts) draws these shapes and knows
 * nothing of marker kinds; the words and colours are decided here, from the contract and Spanmark's own words and colours.
 * Pure functions, unit-tested.
 */
import type { Marker, MarkerKind, SectionFrame } from '@shared/schemas'
import { CHECK_STATE_LOOK, CLEARANCE_LOOK } from '@shared/collab/states'
import type { LengthUnit } from '@shared/format/units'
import { KIND_COLORS, KIND_WORDS, valueText } from '@/components/markers/markerText'
import type { MarkerLabelView, MarkerStroke, MarkerView } from '@/viewer/markerLayer'
import type { Vec3 } from '@/viewer/types'

/** Marker kinds in the viewport (Spanmark's own), as the drawer's chips show them. */
export const MARKER_KIND_COLOURS: Record<MarkerKind, string> = KIND_COLORS
/** Off the points; also the free opening's outline, as the section figures draw it. */
export const BRICK = '#B4442E'
export const PREVIEW_ID = '__preview'

function add(a: Vec3, b: Vec3, s = 1): Vec3 {
  return [a[0] + b[0] * s, a[1] + b[1] * s, a[2] + b[2] * s]
}
function sub(a: Vec3, b: Vec3): Vec3 {
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

/** Where an anchor is drawn: its stored point when it snapped within tolerance, else where it was picked. */
export function anchorDots(marker: Marker): { at: Vec3; offScan: boolean }[] {
  return marker.anchors.map((anchor, i) => {
    const checked = marker.check.anchors[i]
    const picked: Vec3 = [anchor.x, anchor.y, anchor.z]
    if (!checked || marker.check.state === 'pending') return { at: picked, offScan: false }
    if (!checked.onScan || !checked.snapped) return { at: checked.picked, offScan: true }
    return { at: checked.snapped, offScan: false }
  })
}

/** The label's value line and its state: the contract's words, values as Spanmark writes them. */
export function markerLabel(marker: Marker, lengthUnit: LengthUnit): Omit<MarkerLabelView, 'at'> {
  const check = marker.check
  const look = CHECK_STATE_LOOK[check.state]
  const title = marker.label.trim() || KIND_WORDS[marker.kind]
  if (check.state === 'pending') return { title, value: look.word, state: look }
  let prefix = ''
  if (marker.kind === 'section') prefix = check.unit === 'm2' ? 'area ' : 'clear width '
  if (marker.kind === 'clearance') prefix = 'margin '
  const value = check.value === null ? '\u2014' : prefix + valueText(marker, lengthUnit)
  if (marker.kind === 'clearance' && check.state === 'checked' && check.clearance) return { title, value, state: CLEARANCE_LOOK[check.clearance.outcome] }
  return { title, value, state: look }
}

function centroid(points: readonly Vec3[]): Vec3 {
  const s: Vec3 = [0, 0, 0]
  for (const p of points) (s[0] += p[0]), (s[1] += p[1]), (s[2] += p[2])
  const n = Math.max(points.length, 1)
  return [s[0] / n, s[1] / n, s[2] / n]
}

/** Top middle of a ring in its plane: where a section's or a clearance's label stands. */
function topOf(frame: SectionFrame, ring: readonly number[]): Vec3 | null {
  if (ring.length < 2) return null
  let uMin = Infinity, uMax = -Infinity, vMax = -Infinity
  for (let i = 0; i + 1 < ring.length; i += 2) {
    uMin = Math.min(uMin, ring[i]!)
    uMax = Math.max(uMax, ring[i]!)
    vMax = Math.max(vMax, ring[i + 1]!)
  }
  return planePoint(frame, (uMin + uMax) / 2, vMax)
}

/** One marker as the viewport draws it. */
export function markerView(marker: Marker, lengthUnit: LengthUnit): MarkerView {
  const colour = MARKER_KIND_COLOURS[marker.kind]
  const dots = anchorDots(marker).map((d) => ({ at: d.at, color: d.offScan ? BRICK : colour, hollow: d.offScan }))
  const points = dots.map((d) => d.at)
  const strokes: MarkerStroke[] = []
  let fill: MarkerView['fill'] = null
  let at: Vec3 | null = points.length ? centroid(points) : null
  const check = marker.check

  if (marker.kind === 'distance' && points.length === 2) {
    strokes.push({ points, closed: false, color: colour })
  } else if (marker.kind === 'angle' && points.length === 3) {
    const [a, b, c] = points as [Vec3, Vec3, Vec3]
    strokes.push({ points: [a, b, c], closed: false, color: colour })
    const r = arcRadius(a, b, c)
    const arc = arcPoints(a, b, c, r)
    if (arc.length) {
      strokes.push({ points: arc, closed: false, color: colour })
      // The label stands just outside the arc's middle.
      const mid = arc[Math.floor(arc.length / 2)]!
      at = add(b, sub(mid, b), 1.5)
    } else at = b
  } else if (marker.kind === 'section') {
    const s = check.section
    if (s && check.state !== 'pending') {
      const rect = sectionRectangle(s.frame, s.extents)
      fill = { points: rect, color: colour }
      strokes.push({ points: rect, closed: true, color: colour })
      if (s.opening) strokes.push({ points: ringInPlane(s.frame, s.opening.outline), closed: true, color: BRICK })
      at = planePoint(s.frame, (s.extents.uMin + s.extents.uMax) / 2, s.extents.vMax)
    } else if (points.length >= 2) strokes.push({ points, closed: points.length === 3, color: colour, dashed: true })
  } else if (marker.kind === 'clearance') {
    const c = check.clearance
    if (c && check.state !== 'pending') {
      strokes.push({ points: ringInPlane(c.frame, c.silhouette), closed: true, color: colour })
      const [su, sv] = c.nearest.silhouettePoint
      const [bu, bv] = c.nearest.boundaryPoint
      strokes.push({ points: [planePoint(c.frame, su, sv), planePoint(c.frame, bu, bv)], closed: false, color: colour, dashed: true })
      at = topOf(c.frame, c.silhouette)
    }
  }

  // Sections and clearances: the label stands over the top of the rectangle or silhouette; distances and
  // angles: on their line or just outside their arc.
  const drawnFlat = (marker.kind === 'section' && !!check.section) || (marker.kind === 'clearance' && !!check.clearance)
  const placement: 'above' | 'centre' = drawnFlat && check.state !== 'pending' ? 'above' : 'centre'
  const label = at ? { at, placement, ...markerLabel(marker, lengthUnit) } : null
  return { id: marker.id, color: colour, strokes, fill, dots, label }
}

/** The marker being placed: the points so far and the cursor, dashed, with the preview value if any. */
export function previewView(kind: MarkerKind, points: readonly Vec3[], value: string | null): MarkerView | null {
  if (points.length === 0) return null
  const colour = MARKER_KIND_COLOURS[kind]
  const strokes: MarkerStroke[] = []
  if (points.length >= 2) strokes.push({ points: [...points], closed: kind === 'section' && points.length === 3, color: colour, dashed: true })
  let at: Vec3 = centroid(points)
  if (kind === 'angle' && points.length === 3) {
    const [a, b, c] = points as [Vec3, Vec3, Vec3]
    const arc = arcPoints(a, b, c, arcRadius(a, b, c))
    if (arc.length) {
      strokes.push({ points: arc, closed: false, color: colour, dashed: true })
      at = add(b, sub(arc[Math.floor(arc.length / 2)]!, b), 1.5)
    } else at = b
  }
  return {
    id: PREVIEW_ID,
    color: colour,
    strokes,
    fill: null,
    dots: points.map((p) => ({ at: p, color: colour, hollow: false })),
    label: value ? { at, title: 'preview, not saved yet', value, state: null } : null,
  }
}
