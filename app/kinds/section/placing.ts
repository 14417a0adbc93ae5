import type { MarkerCreateBody } from '@shared/schemas'
import { anchorOf, type Picked } from '@/components/viewer/markerPlacing'
import type { Vec3 } from '@/viewer/types'

/** How a section marker's plane is clicked (the third contract mode, by numbers, is not a click mode). */
export type SectionClicks = 'two-points' | 'three-points'

/** Below this plan distance two clicks do not define an upright plane (as viewer/sectionSlab.ts). */
export const MIN_PLAN_SPAN = 0.001
/** Three clicks closer to a line than this (metres, triangle height) do not define a plane. */
export const MIN_PLANE_HEIGHT = 0.001

export interface SectionOptions {
  plane: SectionClicks
  /** Metres. */
  thickness: number
  opening: boolean
}

const ORDINALS = ['first', 'second', 'third']

export function sectionHint(count: number, plane: SectionClicks): string {
  const needed = plane === 'two-points' ? 2 : 3
  if (count >= needed) return 'Set the thickness, then create the section. A click on the points starts over.'
  if (plane === 'two-points') {
    return count === 0 ? 'Click a first point on the line of the cut, as seen from above.' : 'Click a second point: the section is the upright plane through both.'
  }
  return count === 2 ? 'Click the third point of the plane, off the line through the other two.' : `Click the ${ORDINALS[count]} of three points on the plane of the cut.`
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
