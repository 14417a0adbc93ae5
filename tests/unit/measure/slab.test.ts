import { describe, expect, it } from 'vitest'
import { planeFrame, selectSlab } from '@shared/measure/slab'

/** Synthetic box wall set: a 10 x 10 x 10 grid of points at 0.1 m spacing, x, y, z in 0..0.9 (invented). */
function grid(): Float64Array {
  const out: number[] = []
  for (let i = 0; i < 10; i++) for (let j = 0; j < 10; j++) for (let k = 0; k < 10; k++) out.push(i / 10, j / 10, k / 10)
  return Float64Array.from(out)
}

const dot = (a: number[], b: number[]) => a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!

describe('section slab', () => {
  it('keeps exactly one grid layer and projects it with v = +Z on a vertical plane (derived)', () => {
    // Plane x = 0.4 with a slab 0.05 m thick: only the 100 points with x = 0.4.
    const r = selectSlab(grid(), [0.4, 0, 0], [2, 0, 0], 0.05)
    expect(r.ok).toBe(true)
    if (!r.ok) return
    expect(r.count).toBe(100)
    expect(r.frame.v).toEqual([0, 0, 1])
    // u = v x n = Z x X = +Y.
    expect(r.frame.u.map((c) => c + 0)).toEqual([0, 1, 0])
    expect(r.extents.uMin).toBeCloseTo(0, 12)
    expect(r.extents.uMax).toBeCloseTo(0.9, 12)
    expect(r.extents.vMin).toBeCloseTo(0, 12)
    expect(r.extents.vMax).toBeCloseTo(0.9, 12)
    expect(r.uv.length).toBe(200)
  })

  it('widens to three layers at 0.25 m and to an oblique count on a diagonal plane (derived by hand count)', () => {
    const three = selectSlab(grid(), [0.4, 0, 0], [1, 0, 0], 0.25)
    expect(three.ok && three.count).toBe(300)
    // Plane x + y = 0.9 (normal (1,1,0)/sqrt 2), |i + j - 9| / (10 sqrt 2) <= 0.05 keeps i + j = 9 only:
    // 10 (i, j) pairs x 10 heights = 100.
    const diag = selectSlab(grid(), [0.45, 0.45, 0], [1, 1, 0], 0.1)
    expect(diag.ok && diag.count).toBe(100)
  })

  it('gives the plan view u = +X, v = +Y for a horizontal plane, and a right-handed frame when tilted', () => {
    const r = selectSlab(grid(), [0, 0, 0.3], [0, 0, 1], 0.02)
    expect(r.ok && r.count).toBe(100)
    expect(r.ok && r.frame.u).toEqual([1, 0, 0])
    expect(r.ok && r.frame.v).toEqual([0, 1, 0])
    for (const n of [[1, 2, 0.5], [0.1, -0.2, 1], [0, -1, 0], [-0.3, 0.2, -0.9]]) {
      const f = planeFrame([0, 0, 0], n)!
      expect(dot(f.u, f.v)).toBeCloseTo(0, 12)
      expect(dot(f.u, f.n)).toBeCloseTo(0, 12)
      expect(dot(f.v, f.n)).toBeCloseTo(0, 12)
      const cross = [f.u[1] * f.v[2] - f.u[2] * f.v[1], f.u[2] * f.v[0] - f.u[0] * f.v[2], f.u[0] * f.v[1] - f.u[1] * f.v[0]]
      expect(cross.map((c, i) => c - f.n[i]!).every((d) => Math.abs(d) < 1e-12)).toBe(true)
    }
  })

  it('reports an empty slab, a zero normal and a bad thickness', () => {
    expect(selectSlab(grid(), [5, 0, 0], [1, 0, 0], 0.1)).toEqual({ ok: false, reason: 'empty' })
    expect(selectSlab(grid(), [0, 0, 0], [0, 0, 0], 0.1)).toEqual({ ok: false, reason: 'zero-normal' })
    expect(selectSlab(grid(), [0, 0, 0], [1, 0, 0], 0)).toEqual({ ok: false, reason: 'invalid-thickness' })
    expect(selectSlab(new Float64Array(0), [0, 0, 0], [1, 0, 0], 0.1)).toEqual({ ok: false, reason: 'empty' })
  })
})
