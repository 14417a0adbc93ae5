// What the viewer hides and lights (app/viewer/trimStates.ts), on a tile's points in the scan's own frame, against
// a point-by-point reference: each point moved to the scene frame with three.js (a general-purpose library) and
// tested with the shared insideTrim against the trims as the API gives them (scene frame). The rule is the one
// of issue 13: kept when inside at least one keep trim (or there is none) and inside no cut trim.
import { describe, expect, it } from 'vitest'
import { Matrix4, Quaternion, Vector3 } from 'three'
import { insideTrim } from '@shared/measure/trims'
import type { TrimMode, TrimShape } from '@shared/schemas'
import { toScanFrame, trimStates, TRIM_STATE } from '@/viewer/trimStates'
import { mulberry32 } from '../measure/random'

type T = { mode: TrimMode; shape: TrimShape }

/** The rule, point by point, in the scene frame. */
function kept(trims: readonly T[], x: number, y: number, z: number): boolean {
  const keeps = trims.filter((t) => t.mode === 'keep')
  if (keeps.length > 0 && !keeps.some((t) => insideTrim(t.shape, x, y, z))) return false
  return !trims.some((t) => t.mode === 'cut' && insideTrim(t.shape, x, y, z))
}

describe('trim states of a tile', () => {
  // A placement turned 35 degrees about Z and tipped 10 degrees about X, moved far from the origin.
  const placement = new Matrix4().compose(new Vector3(120.5, -48.25, 3.1), new Quaternion().setFromAxisAngle(new Vector3(0, 0, 1), 0.61).multiply(new Quaternion().setFromAxisAngle(new Vector3(1, 0, 0), 0.17)), new Vector3(1, 1, 1))
  const m = placement.elements
  // A tile: its centre (scan frame, float64) and float32 offsets, as the tile format gives them.
  const origin: [number, number, number] = [2, -1, 0.5]
  const random = mulberry32(5)
  const count = 4000
  const offsets = new Float32Array(count * 3).map(() => (random() - 0.5) * 2.4)
  const scene = (i: number) => new Vector3(origin[0] + offsets[i * 3]!, origin[1] + offsets[i * 3 + 1]!, origin[2] + offsets[i * 3 + 2]!).applyMatrix4(placement)
  const at = (dx: number, dy: number, dz: number): [number, number, number] => {
    const p = new Vector3(origin[0] + dx, origin[1] + dy, origin[2] + dz).applyMatrix4(placement)
    return [p.x, p.y, p.z]
  }
  // Trims in the scene frame, about the tile.
  const cutBelow: T = { mode: 'cut', shape: { shape: 'below', point: at(0, 0, -0.6), up: [0, 0, 1] } }
  const keepBox: T = { mode: 'keep', shape: { shape: 'box', centre: at(0.2, 0, 0), size: [1.4, 1.1, 1.6], rotation: [0, 0, Math.sin(0.3), Math.cos(0.3)] } }
  const cutPrism: T = { mode: 'cut', shape: { shape: 'prism', origin: at(0, 0, 0), u: [1, 0, 0], v: [0, 0, 1], outline: [[-0.3, -0.3], [0.4, -0.2], [0.1, 0.5]] } }

  it('hides a scene cut’s points, and lights what the open object keeps, as the rule says point by point', () => {
    const cuts = [cutBelow]
    const member = [keepBox, cutPrism]
    const states = trimStates(origin, offsets, count, { cuts: toScanFrame(cuts, m), member: toScanFrame(member, m) })
    let seen = { cut: 0, kept: 0, left: 0 }
    for (let i = 0; i < count; i++) {
      const p = scene(i)
      const expected = !kept(cuts, p.x, p.y, p.z) ? TRIM_STATE.cut : kept(member, p.x, p.y, p.z) ? TRIM_STATE.kept : TRIM_STATE.left
      expect(states[i], `point ${i}`).toBe(expected)
      if (expected === TRIM_STATE.cut) seen.cut++
      else if (expected === TRIM_STATE.kept) seen.kept++
      else seen.left++
    }
    // Every state occurs (the trims cross the tile), so the comparison means something.
    for (const n of Object.values(seen)) expect(n).toBeGreaterThan(100)
  })

  it('shows every point as it is with no trims, and only the cuts without an open object', () => {
    expect([...trimStates(origin, offsets, count, { cuts: [], member: null })].every((s) => s === TRIM_STATE.shown)).toBe(true)
    const states = trimStates(origin, offsets, count, { cuts: toScanFrame([cutPrism], m), member: null })
    for (let i = 0; i < count; i++) {
      const p = scene(i)
      expect(states[i]).toBe(insideTrim(cutPrism.shape, p.x, p.y, p.z) ? TRIM_STATE.cut : TRIM_STATE.shown)
    }
  })
})
