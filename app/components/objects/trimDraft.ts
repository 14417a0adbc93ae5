/**
 * A trim being drawn, as plain data, and the request body it makes. Pure functions (no Vue, no three): the
 * body is checked with the same shared zod schema the server uses before it is sent, and a problem names the
 * field as the panel shows it ("size y: must be at least 0.001 m").
 *
 * Frames: the scene frame (metres, Z up), as the API takes trims. A box's rotation is a unit quaternion
 * [x, y, z, w]; its typed angles are R = Rz · Ry · Rx (app/lib/placementPose.ts), so "turn" alone is the
 * heading seen from above.
 */
import { matrixQuaternion } from '@shared/geometry/trimFrame'
import { ObjectTrimCreateBody, SceneCutCreateBody, type TrimMode } from '@shared/schemas'
import { matrixOfPose, poseOfMatrix } from '@/lib/placementPose'
import type { Vec3 } from '@/viewer/types'

export type Quat = [number, number, number, number]

/** Whose points a trim selects: a member of an object, or a placement for everything (a scene cut). */
export type TrimTarget = { objectId: string; instanceId: string } | { objectId: null; instanceId: string }

export interface OutlineFrame {
  /** A point of the drawing plane, and its axes: u to the right on the screen, v up, n = u x v towards the viewer. */
  origin: Vec3
  u: Vec3
  v: Vec3
  n: Vec3
}

export type TrimDraft =
  | { shape: 'box'; centre: Vec3; size: Vec3; rotation: Quat }
  | { shape: 'below'; /** Scene height of the level cut, metres. */ height: number; at: Vec3 }
  | { shape: 'prism'; frame: OutlineFrame; corners: [number, number][]; closed: boolean }

export interface TrimProblem {
  field: string
  message: string
}

/** Angles of a box's rotation, degrees: turn about Z, then tilts about Y and X (R = Rz · Ry · Rx). */
export interface BoxAngles {
  turn: number
  tiltY: number
  tiltX: number
}

/** A quaternion [x, y, z, w] to a column-major rotation matrix (with a zero translation). */
function matrixOfQuat([x, y, z, w]: Quat): number[] {
  const xx = x * x, yy = y * y, zz = z * z, xy = x * y, xz = x * z, yz = y * z, wx = w * x, wy = w * y, wz = w * z
  return [1 - 2 * (yy + zz), 2 * (xy + wz), 2 * (xz - wy), 0, 2 * (xy - wz), 1 - 2 * (xx + zz), 2 * (yz + wx), 0, 2 * (xz + wy), 2 * (yz - wx), 1 - 2 * (xx + yy), 0, 0, 0, 0, 1]
}

export function anglesOfQuat(q: Quat): BoxAngles {
  const p = poseOfMatrix(matrixOfQuat(q))
  return { turn: p.rz, tiltY: p.ry, tiltX: p.rx }
}

export function quatOfAngles(a: BoxAngles): Quat {
  return matrixQuaternion(matrixOfPose({ tx: 0, ty: 0, tz: 0, rx: a.tiltX, ry: a.tiltY, rz: a.turn }))
}

/** A first box: at the selection (or the view's centre), a fifth of the scene across, at least 0.2 m, level. */
export function firstBox(at: Vec3, sceneRadius: number): TrimDraft {
  const edge = Math.max(0.2, Math.round(sceneRadius * 0.4 * 10) / 10)
  return { shape: 'box', centre: [...at], size: [edge, edge, edge], rotation: [0, 0, 0, 1] }
}

const AXIS = ['x', 'y', 'z'] as const

/** The panel's name for a field of the request body (a zod issue's path). */
export function fieldName(path: readonly PropertyKey[]): string {
  const [a, b, c] = path.map(String)
  if (a !== 'shape') return a === 'mode' ? 'keep or cut' : (a ?? 'trim')
  if (b === 'centre' || b === 'size') return c !== undefined ? `${b} ${AXIS[Number(c)] ?? c}` : b
  if (b === 'rotation') return 'turn'
  if (b === 'point') return 'height'
  if (b === 'outline') return 'outline'
  if (b === 'u' || b === 'v' || b === 'origin') return 'view'
  return b ?? 'shape'
}

/** The shape as the API takes it. */
export function shapeOf(draft: TrimDraft): unknown {
  if (draft.shape === 'box') return { shape: 'box', centre: draft.centre, size: draft.size, rotation: draft.rotation }
  if (draft.shape === 'below') return { shape: 'below', point: [draft.at[0], draft.at[1], draft.height], up: [0, 0, 1] }
  return { shape: 'prism', origin: draft.frame.origin, u: draft.frame.u, v: draft.frame.v, outline: draft.corners }
}

/**
 * The request body for the trim, checked with the API's own schema: a member's trim (ObjectTrimCreateBody) or a
 * scene cut (SceneCutCreateBody, cut only). A problem names the field.
 */
export function trimBody(target: TrimTarget, mode: TrimMode, draft: TrimDraft): { body: ObjectTrimCreateBody | SceneCutCreateBody } | { problem: TrimProblem } {
  if (draft.shape === 'prism' && !draft.closed) return { problem: { field: 'outline', message: 'close the outline first (click its first corner, or “Close outline”)' } }
  if (target.objectId === null && mode !== 'cut') return { problem: { field: 'keep or cut', message: 'a scene cut only cuts: keep trims belong to an object’s member' } }
  const raw = { mode, shape: shapeOf(draft), ...(target.objectId !== null ? { instanceId: target.instanceId } : {}) }
  const parsed = target.objectId !== null ? ObjectTrimCreateBody.safeParse(raw) : SceneCutCreateBody.safeParse(raw)
  if (parsed.success) return { body: parsed.data }
  const issue = parsed.error.issues[0]!
  return { problem: { field: fieldName(issue.path), message: issue.message } }
}

/** A short reading of a trim's shape for its list row (lengths in metres to the millimetre). */
export function shapeWords(shape: { shape: string } & Record<string, unknown>, length: (m: number) => string): string {
  if (shape.shape === 'box') {
    const size = shape.size as Vec3
    return `box ${size.map(length).join(' × ')}`
  }
  if (shape.shape === 'below') return `below ${length((shape.point as Vec3)[2])}`
  return `outline of ${(shape.outline as unknown[]).length} corners`
}
