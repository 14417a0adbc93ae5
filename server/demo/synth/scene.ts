import { boxFaces, type Rect, type Sphere, type Surface } from './raycast'

/**
 * The demo's invented site, in one frame (metres, Z up): the west loading door of a small harbour
 * museum seen from its yard, and the chart chest that must go through it.
 *
 * The wall's yard face is the plane y = 0, the wall 0.30 m thick (y from 0 to 0.30); the door opening is
 * 1.40 m wide (x from -0.70 to 0.70) and 2.10 m high from the floor (z = 0). Four 145 mm sphere targets
 * stand where both stations see them: three on slim brackets 0.30 m out from the wall's yard face, one on
 * a post in the yard. Aligning station B onto station A by their centres is part of the demo's story.
 */
export const DOOR = { halfWidth: 0.7, height: 2.1, wallThickness: 0.3 } as const

/** The chest: 1.32 m long, 0.62 m deep, 0.85 m high, its frame at the middle of its base. */
export const CHEST = { length: 1.32, depth: 0.62, height: 0.85 } as const

const plaster = { reflectance: 0.8, color: [214, 206, 192] as [number, number, number] }
const stone = { reflectance: 0.55, color: [150, 142, 131] as [number, number, number] }
const timber = { reflectance: 0.45, color: [120, 84, 52] as [number, number, number] }
const target = { reflectance: 0.95, color: [245, 245, 240] as [number, number, number] }

function rect(axis: 0 | 1 | 2, at: number, min: [number, number], max: [number, number], look = plaster): Rect {
  return { kind: 'rect', axis, at, min, max, ...look }
}

/** The targets' radius (145 mm spheres), metres: the align tool's default (shared/schemas/registrations.ts). */
export const TARGET_RADIUS = 0.0725
const target_ = (x: number, y: number, z: number): Sphere => ({ kind: 'sphere', centre: [x, y, z], radius: TARGET_RADIUS, ...target })

export const TARGETS: readonly Sphere[] = [target_(-1.6, -0.3, 1.25), target_(1.75, -0.3, 1.7), target_(-2.4, -0.3, 2.6), target_(0.3, -2.2, 0.95)]

/** A 16 mm bracket from the wall to each wall target's back, and a 30 mm post under the yard one. */
function targetMounts(): Surface[] {
  const steel = { reflectance: 0.35, color: [88, 90, 94] as [number, number, number] }
  return TARGETS.flatMap(({ centre: [x, y, z] }) =>
    y > -1
      ? boxFaces([x - 0.008, y + TARGET_RADIUS - 0.01, z - 0.008], [x + 0.008, 0, z + 0.008], steel, ['+y'])
      : boxFaces([x - 0.015, y - 0.015, 0], [x + 0.015, y + 0.015, z - TARGET_RADIUS + 0.01], steel, ['-z']),
  )
}

export function doorSurfaces(): Surface[] {
  const { halfWidth: w, height: h, wallThickness: d } = DOOR
  return [
    rect(2, 0, [-5, -8], [5, 0], stone), // yard floor
    rect(2, 0, [-5, d], [5, 7], stone), // gallery floor beyond the door
    rect(1, 0, [-5, 0], [-w, 4.5]), // wall face left of the door
    rect(1, 0, [w, 0], [5, 4.5]), // right of it
    rect(1, 0, [-w, h], [w, 4.5]), // above it
    rect(0, -w, [0, 0], [d, h]), // left jamb
    rect(0, w, [0, 0], [d, h]), // right jamb
    rect(2, h, [-w, 0], [w, d]), // head (soffit)
    rect(2, 0, [-w, 0], [w, d], stone), // threshold
    rect(1, 7, [-5, 0], [5, 4.5]), // gallery's far wall
    rect(0, -5, [d, 0], [7, 4.5]), // gallery side walls
    rect(0, 5, [d, 0], [7, 4.5]),
    ...boxFaces([1.2, 2.2, 0], [2.0, 2.8, 0.9], timber, ['-z']), // a plinth in the gallery
    ...TARGETS,
    ...targetMounts(),
  ]
}

export function chestSurfaces(): Surface[] {
  const { length: l, depth: d, height: h } = CHEST
  return [
    ...boxFaces([-l / 2, -d / 2, 0.06], [l / 2, d / 2, h], timber, ['-z']),
    // Four feet, 6 cm high, set in from the corners.
    ...[-1, 1].flatMap((sx) =>
      [-1, 1].flatMap((sy) => boxFaces([sx * (l / 2 - 0.04) - 0.035, sy * (d / 2 - 0.04) - 0.035, 0], [sx * (l / 2 - 0.04) + 0.035, sy * (d / 2 - 0.04) + 0.035, 0.06], timber, ['-z'])),
    ),
  ]
}
