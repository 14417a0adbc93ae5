// A trim being drawn (app/components/objects/trimDraft.ts): the typed angles of a box against three.js's own
// Euler and Quaternion (a general-purpose library, order 'ZYX' is R = Rz · Ry · Rx), the request bodies checked
// with the API's own zod schemas (shared/schemas/objects.ts), and each bad input named by its field.
import { describe, expect, it } from 'vitest'
import { Euler, Quaternion } from 'three'
import { ObjectTrimCreateBody, SceneCutCreateBody } from '@shared/schemas'
import { anglesOfQuat, fieldName, firstBox, quatOfAngles, shapeWords, trimBody, type TrimDraft } from '@/components/objects/trimDraft'

const A = '00000000-0000-4000-8000-00000000000a'
const O = '00000000-0000-4000-8000-00000000000b'
const member = { objectId: O, instanceId: A }
const sceneCut = { objectId: null, instanceId: A }

/** The same rotation whichever sign the quaternion carries (q and -q turn alike). */
function sameRotation(a: number[], b: number[]): void {
  const dot = Math.abs(a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]! + a[3]! * b[3]!)
  expect(dot).toBeCloseTo(1, 9)
}

describe('box angles', () => {
  it('turn, tilt about y and tilt about x are three.js Euler angles in the order ZYX', () => {
    for (const [turn, tiltY, tiltX] of [[30, 0, 0], [-120, 10, 5], [0, 45, -20], [179, -60, 80]] as const) {
      const q = quatOfAngles({ turn, tiltY, tiltX })
      const reference = new Quaternion().setFromEuler(new Euler((tiltX * Math.PI) / 180, (tiltY * Math.PI) / 180, (turn * Math.PI) / 180, 'ZYX'))
      sameRotation(q, reference.toArray())
      const back = anglesOfQuat(q)
      expect(back.turn).toBeCloseTo(turn, 9)
      expect(back.tiltY).toBeCloseTo(tiltY, 9)
      expect(back.tiltX).toBeCloseTo(tiltX, 9)
    }
  })

  it('reads a quaternion from three.js back as its heading', () => {
    const q = new Quaternion().setFromAxisAngle({ x: 0, y: 0, z: 1 } as never, (75 * Math.PI) / 180).toArray() as [number, number, number, number]
    expect(anglesOfQuat(q).turn).toBeCloseTo(75, 9)
  })
})

describe('trim bodies', () => {
  const box: TrimDraft = { shape: 'box', centre: [1, 2, 0.5], size: [0.8, 0.6, 1.3], rotation: [0, 0, 0, 1] }

  it('a member’s keep box and a scene cut below a height are what the API takes', () => {
    const b = trimBody(member, 'keep', box)
    expect('body' in b && ObjectTrimCreateBody.parse(b.body)).toMatchObject({ mode: 'keep', instanceId: A, shape: { shape: 'box', size: [0.8, 0.6, 1.3] } })
    const below = trimBody(sceneCut, 'cut', { shape: 'below', height: 0.012, at: [3, 4, 0] })
    expect('body' in below && SceneCutCreateBody.parse(below.body)).toMatchObject({ mode: 'cut', shape: { shape: 'below', point: [3, 4, 0.012], up: [0, 0, 1] } })
  })

  it('names the field of a bad size, and refuses a keep scene cut and an open outline before sending', () => {
    expect(trimBody(member, 'keep', { ...box, size: [0.8, 0, 1.3] })).toEqual({ problem: { field: 'size y', message: 'must be at least 0.001 m' } })
    expect(trimBody(member, 'keep', { ...box, centre: [1, Number.NaN, 0] })).toMatchObject({ problem: { field: 'centre y' } })
    expect(trimBody(sceneCut, 'keep', box)).toMatchObject({ problem: { field: 'keep or cut' } })
    const frame = { origin: [0, 0, 0] as [number, number, number], u: [1, 0, 0] as [number, number, number], v: [0, 0, 1] as [number, number, number], n: [0, -1, 0] as [number, number, number] }
    expect(trimBody(member, 'cut', { shape: 'prism', frame, corners: [[0, 0], [1, 0], [1, 1]], closed: false })).toMatchObject({ problem: { field: 'outline' } })
    const line = trimBody(member, 'cut', { shape: 'prism', frame, corners: [[0, 0], [1, 0], [2, 0]], closed: true })
    expect(line).toEqual({ problem: { field: 'outline', message: 'encloses no area (its corners lie on a line)' } })
    const ok = trimBody(member, 'cut', { shape: 'prism', frame, corners: [[0, 0], [1, 0], [1, 1]], closed: true })
    expect('body' in ok && ok.body.shape).toMatchObject({ shape: 'prism', outline: [[0, 0], [1, 0], [1, 1]], u: [1, 0, 0], v: [0, 0, 1] })
  })

  it('maps the API’s field paths to the panel’s names', () => {
    expect(fieldName(['shape', 'size', 2])).toBe('size z')
    expect(fieldName(['shape', 'point', 2])).toBe('height')
    expect(fieldName(['mode'])).toBe('keep or cut')
  })

  it('starts a box at the given point, level, a fifth of the scene across but never under 0.2 m', () => {
    expect(firstBox([1, 2, 3], 0.1)).toEqual({ shape: 'box', centre: [1, 2, 3], size: [0.2, 0.2, 0.2], rotation: [0, 0, 0, 1] })
    expect((firstBox([0, 0, 0], 5) as Extract<TrimDraft, { shape: 'box' }>).size).toEqual([2, 2, 2])
  })

  it('reads a trim in a few words', () => {
    expect(shapeWords({ shape: 'box', size: [0.8, 0.6, 1.3] }, (m) => `${m} m`)).toBe('box 0.8 m × 0.6 m × 1.3 m')
    expect(shapeWords({ shape: 'below', point: [0, 0, 0.01] }, (m) => `${m} m`)).toBe('below 0.01 m')
  })
})
