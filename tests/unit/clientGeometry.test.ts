// Client-side conversions against outside references: the international foot (exactly 0.3048 m, by the
// 1959 international yard and pound agreement; NIST SP 811 appendix B) and three.js's Euler rotations
// (a general-purpose reference library) for the placement form's angles.
import { describe, expect, it } from 'vitest'
import { Euler, Matrix4 } from 'three'
import { rigidProblem } from '@shared/geometry/rigidTransform'
import { matrixOfPose, poseOfMatrix } from '@/lib/placementPose'
import { feetInches, parseLength } from '@shared/format/units'

describe('feet and inches', () => {
  it('writes exact lengths to the sixteenth of an inch', () => {
    expect(feetInches(0.3048)).toBe(`1' 0"`)
    expect(feetInches(1.2954)).toBe(`4' 3"`) // 51 in
    expect(feetInches(0.0254 / 16)).toBe(`0' 0 1/16"`)
    expect(feetInches(0.0254 * 2.5)).toBe(`0' 2 1/2"`)
    expect(feetInches(-0.0254 * 12.75)).toBe(`-1' 0 3/4"`)
  })
  it('reads lengths in millimetres back to metres', () => {
    expect(parseLength('1234.5', 'mm')).toEqual({ metres: 1.2345 })
    expect('error' in parseLength('abc', 'm')).toBe(true)
  })
})

describe('placement pose', () => {
  const pose = { tx: 1.25, ty: -3.5, tz: 0.4, rx: 10, ry: -20, rz: 135 }
  it("builds Rz·Ry·Rx as three.js does for Euler order 'ZYX'", () => {
    const theirs = new Matrix4().makeRotationFromEuler(new Euler((pose.rx * Math.PI) / 180, (pose.ry * Math.PI) / 180, (pose.rz * Math.PI) / 180, 'ZYX')).setPosition(pose.tx, pose.ty, pose.tz).elements
    const ours = matrixOfPose(pose)
    ours.forEach((v, i) => expect(v).toBeCloseTo(theirs[i]!, 12))
    expect(rigidProblem(ours)).toBeNull()
  })
  it('reads the same angles back from the matrix', () => {
    const back = poseOfMatrix(matrixOfPose(pose))
    for (const k of Object.keys(pose) as (keyof typeof pose)[]) expect(back[k]).toBeCloseTo(pose[k], 9)
  })
})
