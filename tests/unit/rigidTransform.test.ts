// Rigid-matrix checks and inverse against three.js's Matrix4 (a general-purpose reference library):
// its rotations are rigid, its scale and shear matrices are not, and its invert() agrees with ours.
import { describe, expect, it } from 'vitest'
import { Matrix4, Vector3 } from 'three'
import { invertRigid, rigidProblem, rotationZ, transformPoint } from '@shared/geometry/rigidTransform'

const rotation = () => new Matrix4().makeRotationAxis(new Vector3(1, 2, 3).normalize(), 0.7).setPosition(12.5, -3.25, 100.125)

describe('rigid transforms', () => {
  it('accepts three.js rotations with translations and the identity', () => {
    expect(rigidProblem(rotation().elements)).toBeNull()
    expect(rigidProblem(new Matrix4().elements)).toBeNull()
  })

  it('names what is wrong with a scale, a shear, a mirror and a projective row', () => {
    expect(rigidProblem(new Matrix4().makeScale(1.001, 1, 1).elements)).toMatch(/column 0 has length 1.001.*scales/)
    expect(rigidProblem(new Matrix4().makeShear(0.1, 0, 0, 0, 0, 0).elements)).not.toBeNull()
    // Unit columns that lean on each other: a shear with no change of length.
    const lean = new Matrix4().set(1, Math.sin(0.1), 0, 0, 0, Math.cos(0.1), 0, 0, 0, 0, 1, 0, 0, 0, 0, 1).elements
    expect(rigidProblem(lean)).toMatch(/columns 0 and 1 are not perpendicular/)
    expect(rigidProblem(new Matrix4().makeScale(1, 1, -1).elements)).toMatch(/mirrors/)
    const projective = new Matrix4().elements.slice()
    projective[3] = 0.5
    expect(rigidProblem(projective)).toMatch(/last row/)
    expect(rigidProblem([1, 2, 3])).toMatch(/16/)
    expect(rigidProblem([...new Matrix4().elements.slice(0, 15), Number.NaN])).toMatch(/element 15/)
  })

  it('tolerates rounding within 1e-6 and not beyond', () => {
    const m = new Matrix4().elements.slice()
    m[0] = 1 + 4e-7
    expect(rigidProblem(m)).toBeNull()
    m[0] = 1 + 4e-6
    expect(rigidProblem(m)).not.toBeNull()
  })

  it('inverts like three.js and maps points like Vector3.applyMatrix4', () => {
    const m = rotation()
    const ours = invertRigid(m.elements)
    const theirs = m.clone().invert().elements
    ours.forEach((v, i) => expect(v).toBeCloseTo(theirs[i]!, 12))
    const p = new Vector3(0.3, -1.2, 2.5).applyMatrix4(m)
    const q = transformPoint(m.elements, 0.3, -1.2, 2.5)
    expect(q[0]).toBeCloseTo(p.x, 12)
    expect(q[1]).toBeCloseTo(p.y, 12)
    expect(q[2]).toBeCloseTo(p.z, 12)
  })

  it('builds rotations about Z like three.js', () => {
    const theirs = new Matrix4().makeRotationZ((30 * Math.PI) / 180).setPosition(1, 2, 3).elements
    rotationZ(30, 1, 2, 3).forEach((v, i) => expect(v).toBeCloseTo(theirs[i]!, 14))
  })
})
