// A trim carried by a rigid matrix against three.js (a general-purpose reference library): points moved by
// Vector3.applyMatrix4 and the trim moved by trimToFrame give the same mask; a matrix then its inverse gives
// the shape back; the composed box rotation equals three.js' Quaternion.multiplyQuaternions.
import { describe, expect, it } from 'vitest'
import { Matrix4, Quaternion, Vector3 } from 'three'
import { invertRigid } from '@shared/geometry/rigidTransform'
import { matrixQuaternion, trimToFrame } from '@shared/geometry/trimFrame'
import { type TrimShapeInput, TrimShape } from '@shared/schemas/objects'
import { trimMask } from '@shared/measure/trims'
import { mulberry32 } from '../measure/random'

const shape = (s: TrimShapeInput) => TrimShape.parse(s)

const shapes = [
  shape({ shape: 'box', centre: [0.3, -0.2, 0.1], size: [1.2, 0.6, 0.9], rotation: [0.2, -0.4, 0.1, 0.85] }),
  shape({ shape: 'prism', origin: [0.1, 0.1, -0.3], u: [0, 2, 0], v: [0, 0, 1], outline: [[-1, -1], [1, -0.8], [0, 0], [0.9, 1], [-0.7, 0.6]], near: -0.5, far: 0.8 }),
  shape({ shape: 'below', point: [0, 0, -0.1], up: [0.1, 0, 1] }),
]

function randomRigid(rand: () => number): Matrix4 {
  const q = new Quaternion(rand() - 0.5, rand() - 0.5, rand() - 0.5, rand() - 0.5).normalize()
  return new Matrix4().makeRotationFromQuaternion(q).setPosition(10 * rand() - 5, 10 * rand() - 5, 3 * rand())
}

/** Every number of a shape, flat (quaternions with w >= 0 so q and -q compare equal). */
function numbers(s: TrimShape): number[] {
  if (s.shape === 'box') {
    const sign = s.rotation[3] < 0 ? -1 : 1
    return [...s.centre, ...s.size, ...s.rotation.map((c) => sign * c)]
  }
  if (s.shape === 'prism') return [...s.origin, ...s.u, ...s.v, ...s.outline.flat(), s.near ?? 0, s.far ?? 0]
  return [...s.point, ...s.up]
}

describe('trimToFrame', () => {
  it('moving the points and the trim by the same matrix keeps the mask', () => {
    const rand = mulberry32(21)
    const count = 20000
    const xyz = Float64Array.from({ length: 3 * count }, () => (rand() - 0.5) * 3)
    for (let t = 0; t < 6; t++) {
      const m = randomRigid(rand)
      const moved = new Float64Array(xyz.length)
      const p = new Vector3()
      for (let i = 0; i < count; i++) moved.set(p.fromArray(xyz, 3 * i).applyMatrix4(m).toArray(), 3 * i)
      for (const s of shapes) {
        for (const mode of ['keep', 'cut'] as const) {
          const before = trimMask(xyz, [{ mode, shape: s }])
          const after = trimMask(moved, [{ mode, shape: trimToFrame(s, m.elements) }])
          const kept = before.reduce((a, b) => a + b, 0)
          expect(kept).toBeGreaterThan(0)
          expect(kept).toBeLessThan(count)
          let differ = 0
          for (let i = 0; i < count; i++) if (after[i] !== before[i]) differ++
          expect(differ).toBe(0)
        }
      }
    }
  })

  it('a matrix then its inverse gives the shape back', () => {
    const rand = mulberry32(22)
    for (let t = 0; t < 10; t++) {
      const m = randomRigid(rand).elements
      for (const s of shapes) {
        const back = trimToFrame(trimToFrame(s, m), invertRigid(m))
        expect(back.shape).toBe(s.shape)
        const [a, b] = [numbers(back), numbers(s)]
        expect(a.length).toBe(b.length)
        a.forEach((x, i) => expect(x).toBeCloseTo(b[i]!, 12))
      }
    }
  })

  it("composes the box rotation as three.js does and reads a matrix's quaternion as three.js does", () => {
    const rand = mulberry32(23)
    for (let t = 0; t < 50; t++) {
      const m = randomRigid(rand)
      const ours = matrixQuaternion(m.elements)
      const theirs = new Quaternion().setFromRotationMatrix(m)
      const sign = Math.sign(ours[3] * theirs.w) || 1
      ours.forEach((c, i) => expect(sign * c).toBeCloseTo(theirs.toArray()[i]!, 12))
      const box = shapes[0]!
      if (box.shape !== 'box') throw new Error('the first shape is a box')
      const moved = trimToFrame(box, m.elements)
      if (moved.shape !== 'box') throw new Error('a box stays a box')
      const expected = theirs.clone().multiply(new Quaternion(...box.rotation))
      const s = Math.sign(moved.rotation[3] * expected.w) || 1
      moved.rotation.forEach((c, i) => expect(s * c).toBeCloseTo(expected.toArray()[i]!, 12))
      expect(moved.centre).toEqual(new Vector3(...box.centre).applyMatrix4(m).toArray().map((c) => expect.closeTo(c, 12)))
    }
    // The three branches that a trace <= 0 takes: half-turns about x, y and z.
    for (const axis of [new Vector3(1, 0, 0), new Vector3(0, 1, 0), new Vector3(0, 0, 1)]) {
      const m = new Matrix4().makeRotationAxis(axis, Math.PI * 0.9)
      const theirs = new Quaternion().setFromRotationMatrix(m).toArray()
      const ours = matrixQuaternion(m.elements)
      const sign = Math.sign(ours[3] * theirs[3]!) || Math.sign(ours[0] * theirs[0]! + ours[1] * theirs[1]! + ours[2] * theirs[2]!)
      ours.forEach((c, i) => expect(sign * c).toBeCloseTo(theirs[i]!, 12))
    }
  })

  it('refuses a matrix that is not rigid, saying why', () => {
    expect(() => trimToFrame(shapes[0]!, new Matrix4().makeScale(2, 1, 1).elements)).toThrow(/not rigid \(column 0 has length 2/)
  })
})
