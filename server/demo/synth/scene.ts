import { boxFaces, group, type Group, type Rect, type Sphere, type Surface } from './raycast'

/**
 * The demo's invented site, in one frame (metres, Z up): the west loading door of a small harbour
 * museum seen from its yard, and the chart chest that must go through it, waiting in the yard to the right of
 * the door on the low trolley it is moved on.
 *
 * The wall's yard face is the plane y = 0, the wall 0.30 m thick (y from 0 to 0.30); the door opening is
 * 1.40 m wide (x from -0.70 to 0.70) and 2.10 m high from the floor (z = 0). Four 145 mm sphere targets
 * stand where both stations see them: three on slim brackets 0.30 m out from the wall's yard face, one on
 * a post in the yard. Aligning station B onto station A by their centres is part of the demo's story.
 */
export const DOOR = { halfWidth: 0.7, height: 2.1, wallThickness: 0.3 } as const

/** The chest: 1.32 m long, 0.62 m deep, 0.85 m high (its plinth, 3 cm in from its sides, included). */
export const CHEST = { length: 1.32, depth: 0.62, height: 0.85 } as const

/**
 * The trolley: a steel deck 1.20 x 0.50 m (6 cm in from the chest's sides all round, so the chest's outline
 * is the object's from above), its top 0.12 m off the floor, on four ball castors.
 */
export const TROLLEY = { length: 1.2, depth: 0.5, height: 0.12, deck: 0.025, castorRadius: 0.04 } as const

/**
 * Where the chest on its trolley waits: the middle of the trolley's footprint on the yard floor, its length
 * along the wall (x), 1.5 m out from it and clear of both door stations' view of the door and the targets.
 * Chest and trolley together are CHEST.length x CHEST.depth x (TROLLEY.height + CHEST.height) = 1.32 x 0.62 x 0.97 m.
 */
export const CHEST_AT: readonly [number, number, number] = [1.6, -1.5, 0]

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

/** Each target on its mount (a 16 mm bracket from the wall to a wall target's back, a 30 mm post under the yard one), as a group. */
function mountedTargets(): Surface[] {
  const steel = { reflectance: 0.35, color: [88, 90, 94] as [number, number, number] }
  return TARGETS.map((sphere) => {
    const [x, y, z] = sphere.centre
    const mount =
      y > -1
        ? boxFaces([x - 0.008, y + TARGET_RADIUS - 0.01, z - 0.008], [x + 0.008, 0, z + 0.008], steel, ['+y'])
        : boxFaces([x - 0.015, y - 0.015, 0], [x + 0.015, y + 0.015, z - TARGET_RADIUS + 0.01], steel, ['-z'])
    return group([sphere, ...mount])
  })
}

/** The door, the wall, the floors, the gallery beyond and the targets: what the stations of the door scan. */
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
    group(boxFaces([1.2, 2.2, 0], [2.0, 2.8, 0.9], timber, ['-z'])), // a plinth in the gallery
    ...mountedTargets(),
  ]
}

/** The chest on its trolley where it waits in the yard (CHEST_AT), as one group. */
export function chestOnTrolley(): Group {
  const { length: l, depth: d, height: h } = CHEST
  const { length: tl, depth: td, height: th, deck, castorRadius: cr } = TROLLEY
  const [x, y, z] = CHEST_AT
  const at = (min: [number, number, number], max: [number, number, number], look: typeof timber, skip: string[] = []) =>
    boxFaces([x + min[0], y + min[1], z + min[2]], [x + max[0], y + max[1], z + max[2]], look, skip)
  const steel = { reflectance: 0.4, color: [74, 98, 118] as [number, number, number] }
  const rubber = { reflectance: 0.08, color: [38, 38, 40] as [number, number, number] }
  const plinth = 0.06
  return group([
    // The chest's body on its plinth, set on the deck.
    ...at([-l / 2, -d / 2, th + plinth], [l / 2, d / 2, th + h], timber, ['-z']),
    ...at([-l / 2 + 0.03, -d / 2 + 0.03, th], [l / 2 - 0.03, d / 2 - 0.03, th + plinth], timber, ['-z', '+z']),
    // The deck, and a castor under each corner: a housing and its ball.
    ...at([-tl / 2, -td / 2, th - deck], [tl / 2, td / 2, th], steel),
    ...[-1, 1].flatMap((sx) =>
      [-1, 1].flatMap((sy) => {
        const cx = sx * (tl / 2 - 0.07)
        const cy = sy * (td / 2 - 0.07)
        return [
          ...at([cx - 0.035, cy - 0.035, cr + 0.01], [cx + 0.035, cy + 0.035, th - deck], steel, ['+z']),
          { kind: 'sphere' as const, centre: [x + cx, y + cy, z + cr] as [number, number, number], radius: cr, ...rubber },
        ]
      }),
    ),
  ])
}

/** The whole yard as every station of the demo sees it: the door's surroundings and the chest on its trolley. */
export function yardSurfaces(): Surface[] {
  return [...doorSurfaces(), chestOnTrolley()]
}
