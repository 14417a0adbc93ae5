/**
 * Placing a marker by clicks: how many points each tool takes, what to click next, the request body the
 * clicks make, and the live preview value. Pure functions (no Vue, no three.js), so they are unit-tested.
 * Points are in the scene frame (metres, Z up) as the viewer picks them.
 */
import type { Anchor, ClearanceParams, MarkerCreateBody } from '@shared/schemas'
import { measureAngle } from '@shared/measure/angle'
import { measureDistance } from '@shared/measure/distance'
import { formatWithUncertainty, type LengthUnit } from '@shared/format/units'
import type { Vec3 } from '@/viewer/types'
import type { MarkerTool } from './viewerTools'

/** How a section marker's plane is clicked (the third contract mode, by numbers, is not a click mode). */
export type SectionClicks = 'two-points' | 'three-points'

/** A clicked stored point: the placement it lies on and where, scene frame. */
export interface Picked {
  instanceId: string
  point: Vec3
}

/** Below this plan distance two clicks do not define an upright plane (as viewer/sectionSlab.ts). */
export const MIN_PLAN_SPAN = 0.001
/** Three clicks closer to a line than this (metres, triangle height) do not define a plane. */
export const MIN_PLANE_HEIGHT = 0.001

export function anchorsNeeded(tool: MarkerTool, plane: SectionClicks = 'two-points'): number {
  if (tool === 'distance') return 2
  if (tool === 'angle') return 3
  if (tool === 'section-marker') return plane === 'two-points' ? 2 : 3
  return 0
}

const ORDINALS = ['first', 'second', 'third']

/** The hint line: what to click next, given how many points are in. */
export function placingHint(tool: MarkerTool, count: number, plane: SectionClicks = 'two-points'): string {
  switch (tool) {
    case 'distance':
      return count === 0 ? 'Click the first end of the distance on the points.' : 'Click the other end. Esc starts over.'
    case 'angle':
      if (count === 0) return 'Click a point on the first arm.'
      if (count === 1) return 'Click the vertex, where the two arms meet.'
      return 'Click a point on the second arm. Esc starts over.'
    case 'section-marker': {
      const needed = anchorsNeeded(tool, plane)
      if (count >= needed) return 'Set the thickness, then create the section. A click on the points starts over.'
      if (plane === 'two-points') {
        return count === 0
          ? 'Click a first point on the line of the cut, as seen from above.'
          : 'Click a second point: the section is the upright plane through both.'
      }
      return count === 2
        ? 'Click the third point of the plane, off the line through the other two.'
        : `Click the ${ORDINALS[count]} of three points on the plane of the cut.`
    }
    case 'clearance':
      return 'Choose the object’s placement and a section with an opening, then check.'
  }
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

/** Why these section clicks cannot make a plane, or null. */
export function sectionProblem(picks: readonly Picked[], plane: SectionClicks): string | null {
  const [a, b, c] = picks.map((p) => p.point)
  if (plane === 'two-points') {
    if (!a || !b) return null
    return Math.hypot(b[0] - a[0], b[1] - a[1]) < MIN_PLAN_SPAN ? 'The two points are at the same place seen from above. Click two points apart.' : null
  }
  if (!a || !b || !c) return null
  const ab = [b[0] - a[0], b[1] - a[1], b[2] - a[2]]
  const ac = [c[0] - a[0], c[1] - a[1], c[2] - a[2]]
  const cross = Math.hypot(ab[1]! * ac[2]! - ab[2]! * ac[1]!, ab[2]! * ac[0]! - ab[0]! * ac[2]!, ab[0]! * ac[1]! - ab[1]! * ac[0]!)
  const base = Math.max(Math.hypot(ab[0]!, ab[1]!, ab[2]!), Math.hypot(ac[0]!, ac[1]!, ac[2]!))
  // |ab x ac| is twice the triangle's area; over its longest side from a, a height.
  return base === 0 || cross / base < MIN_PLANE_HEIGHT ? 'The three points lie in a line. Click a third point off the line through the first two.' : null
}

export interface SectionOptions {
  plane: SectionClicks
  /** Metres. */
  thickness: number
  opening: boolean
}

export function distanceBody(picks: readonly Picked[]): MarkerCreateBody {
  return { kind: 'distance', anchors: picks.map(anchorOf), params: {} }
}

export function angleBody(picks: readonly Picked[]): MarkerCreateBody {
  return { kind: 'angle', anchors: picks.map(anchorOf), params: {} }
}

export function sectionBody(picks: readonly Picked[], options: SectionOptions): MarkerCreateBody {
  return { kind: 'section', anchors: picks.map(anchorOf), params: { plane: options.plane, thickness: options.thickness, opening: options.opening } }
}

/** A section whose plane is typed in: a point on it, its normal (scene frame) and the placements it cuts. */
export function sectionNumbersBody(plane: { origin: Vec3; normal: Vec3; instanceIds: string[] }, options: Omit<SectionOptions, 'plane'>): MarkerCreateBody {
  return {
    kind: 'section',
    anchors: [],
    params: { plane: 'numbers', origin: plane.origin, normal: plane.normal, instanceIds: plane.instanceIds, thickness: options.thickness, opening: options.opening },
  }
}

export interface ClearanceOptions {
  objectInstanceId: string
  sectionMarkerId: string
  /** Metres; omitted: the project's required margin. */
  requiredMargin?: number
  /** How it moves; omitted: on the floor when the opening has one, else carried. */
  carriage?: ClearanceParams['carriage']
  /** How it may be turned or tipped; omitted: any turn in the opening's plane. */
  orientation?: ClearanceParams['orientation']
}

export function clearanceBody(options: ClearanceOptions): MarkerCreateBody {
  const params: ClearanceParams = {
    objectInstanceId: options.objectInstanceId,
    sectionMarkerId: options.sectionMarkerId,
  }
  if (options.requiredMargin !== undefined) params.requiredMargin = options.requiredMargin
  if (options.carriage) params.carriage = options.carriage
  if (options.orientation) params.orientation = options.orientation
  return { kind: 'clearance', anchors: [], params }
}

/**
 * The preview's value text for the points so far plus the cursor: a distance of two, an angle of three
 * (arm, vertex, arm); `u` per point is its standard uncertainty per coordinate, metres. Null when the points
 * do not make a value yet (too few, or coincident).
 */
export function previewText(tool: MarkerTool, points: readonly Vec3[], u: readonly number[], unit: LengthUnit): string | null {
  if (tool === 'distance' && points.length === 2) {
    const d = measureDistance(points[0]!, points[1]!, u[0] ?? 0, u[1] ?? 0)
    return d.ok ? formatWithUncertainty(d.distance, 2 * d.u.distance, 'length', unit) : null
  }
  if (tool === 'angle' && points.length === 3) {
    const a = measureAngle(points[0]!, points[1]!, points[2]!, u[0] ?? 0, u[1] ?? 0, u[2] ?? 0)
    return a.ok ? formatWithUncertainty(a.degrees, 2 * a.u.degrees, 'angle', unit) : null
  }
  return null
}
