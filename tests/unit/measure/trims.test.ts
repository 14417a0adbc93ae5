// Trims against references outside the project: random rotated boxes against three.js (Matrix4.compose and
// invert, a general-purpose reference library) taking the points into the box's own frame; prisms against
// robust-point-in-polygon (exact predicates: -1 inside, 0 on the boundary, 1 outside). The keep/cut rule on
// hand-made clouds.
import { describe, expect, it } from 'vitest'
import { Matrix4, Quaternion, Vector3 } from 'three'
import classifyPoint from 'robust-point-in-polygon'
import { type TrimShapeInput, TrimShape } from '@shared/schemas/objects'
import { insideTrim, keptIndices, keptPoints, trimCounts, trimMask } from '@shared/measure/trims'
import { mulberry32 } from './random'

const shape = (s: TrimShapeInput) => TrimShape.parse(s)

function randomCloud(rand: () => number, count: number, spread = 4): Float64Array {
  return Float64Array.from({ length: 3 * count }, () => (rand() - 0.5) * spread)
}

function randomQuaternion(rand: () => number): Quaternion {
  return new Quaternion(rand() - 0.5, rand() - 0.5, rand() - 0.5, rand() - 0.5).normalize()
}

/** A simple concave outline: corners at increasing angles around a centre, each at its own radius. */
function starOutline(rand: () => number, corners: number): [number, number][] {
  const cu = rand() - 0.5, cv = rand() - 0.5
  return Array.from({ length: corners }, (_, i) => {
    const a = (2 * Math.PI * (i + 0.8 * rand())) / corners
    const r = 0.2 + 1.3 * rand()
    return [cu + r * Math.cos(a), cv + r * Math.sin(a)] as [number, number]
  })
}

describe('trims against reference libraries', () => {
  it('counts the points of random rotated boxes as three.js does in the box frame', () => {
    const rand = mulberry32(11)
    const xyz = randomCloud(rand, 20000)
    for (let t = 0; t < 12; t++) {
      const q = randomQuaternion(rand)
      const centre = new Vector3(rand() - 0.5, rand() - 0.5, rand() - 0.5)
      const size = [0.3 + 2 * rand(), 0.3 + 2 * rand(), 0.3 + 2 * rand()] as [number, number, number]
      const toBox = new Matrix4().compose(centre, q, new Vector3(1, 1, 1)).invert()
      const p = new Vector3()
      let expected = 0
      for (let i = 0; i < xyz.length / 3; i++) {
        p.set(xyz[3 * i]!, xyz[3 * i + 1]!, xyz[3 * i + 2]!).applyMatrix4(toBox)
        if (Math.abs(p.x) <= size[0] / 2 && Math.abs(p.y) <= size[1] / 2 && Math.abs(p.z) <= size[2] / 2) expected++
      }
      const box = shape({ shape: 'box', centre: centre.toArray(), size, rotation: [q.x, q.y, q.z, q.w] })
      expect(trimCounts(xyz, [{ mode: 'keep', shape: box }])).toEqual({ stored: 20000, kept: expected, cut: 20000 - expected })
      expect(trimCounts(xyz, [{ mode: 'cut', shape: box }]).kept).toBe(20000 - expected)
      expect(expected).toBeGreaterThan(0)
    }
  })

  it('counts the points of random concave prisms as robust-point-in-polygon does in the view plane', () => {
    const rand = mulberry32(12)
    const xyz = randomCloud(rand, 20000)
    for (let t = 0; t < 12; t++) {
      const q = randomQuaternion(rand)
      // u and v: two columns of a random rotation, with lengths of their own (normalised by the trim).
      const u = new Vector3(1, 0, 0).applyQuaternion(q)
      const v = new Vector3(0, 1, 0).applyQuaternion(q)
      const n = new Vector3().crossVectors(u, v)
      const origin = new Vector3(rand() - 0.5, rand() - 0.5, rand() - 0.5)
      const outline = starOutline(rand, 5 + Math.floor(rand() * 20))
      const bounded = t % 2 === 0
      const near = -0.2 - rand(), far = 0.1 + rand()
      let expected = 0
      const p = new Vector3()
      for (let i = 0; i < xyz.length / 3; i++) {
        p.set(xyz[3 * i]!, xyz[3 * i + 1]!, xyz[3 * i + 2]!).sub(origin)
        const along = p.dot(n)
        if (bounded && (along < near || along > far)) continue
        if (classifyPoint(outline, [p.dot(u), p.dot(v)]) <= 0) expected++
      }
      const prism = shape({
        shape: 'prism',
        origin: origin.toArray(),
        u: u.clone().multiplyScalar(2.5).toArray(),
        v: v.clone().multiplyScalar(0.4).toArray(),
        outline,
        ...(bounded ? { near, far } : {}),
      })
      expect(trimCounts(xyz, [{ mode: 'keep', shape: prism }]).kept).toBe(expected)
      expect(expected).toBeGreaterThan(0)
    }
  })
})

describe('boundaries', () => {
  const square = shape({ shape: 'box', centre: [0, 0, 0], size: [2, 2, 2] })
  it('a box is closed: a point on a face, an edge or a corner is inside', () => {
    expect(insideTrim(square, 1, 0, 0)).toBe(true)
    expect(insideTrim(square, -1, 1, 0)).toBe(true)
    expect(insideTrim(square, 1, 1, -1)).toBe(true)
    expect(insideTrim(square, 1.000001, 0, 0)).toBe(false)
  })

  it('a prism is closed: on an edge, a corner, near or far is inside, as robust-point-in-polygon says 0', () => {
    // An L-shaped (concave) outline in the x y plane, swept along z from -1 to 2.
    const outline: [number, number][] = [[0, 0], [4, 0], [4, 1], [1, 1], [1, 3], [0, 3]]
    const prism = shape({ shape: 'prism', origin: [0, 0, 0], u: [1, 0, 0], v: [0, 1, 0], outline, near: -1, far: 2 })
    const onBoundary: [number, number][] = [[2, 0], [4, 0.5], [2, 1], [1, 1], [1, 2], [0, 3], [0, 1.5], [4, 1], [0.5, 3]]
    for (const [a, b] of onBoundary) {
      expect(classifyPoint(outline, [a, b])).toBe(0)
      expect(insideTrim(prism, a, b, 0)).toBe(true)
    }
    for (const [a, b] of [[2, 2], [4.5, 0.5], [1.5, 1.0000001], [-0.0001, 1]] as [number, number][]) {
      expect(classifyPoint(outline, [a, b])).toBe(1)
      expect(insideTrim(prism, a, b, 0)).toBe(false)
    }
    expect(insideTrim(prism, 0.5, 0.5, -1)).toBe(true)
    expect(insideTrim(prism, 0.5, 0.5, 2)).toBe(true)
    expect(insideTrim(prism, 0.5, 0.5, 2.0001)).toBe(false)
    expect(insideTrim(prism, 0.5, 0.5, -1.0001)).toBe(false)
  })

  it('a prism counts a self-crossing outline by the even-odd rule: the middle of a five-pointed star is outside', () => {
    const star: [number, number][] = [0, 2, 4, 1, 3].map((i) => [Math.cos((2 * Math.PI * i) / 5 + Math.PI / 2), Math.sin((2 * Math.PI * i) / 5 + Math.PI / 2)])
    const prism = shape({ shape: 'prism', origin: [0, 0, 0], u: [1, 0, 0], v: [0, 1, 0], outline: star })
    expect(insideTrim(prism, 0, 0, 5)).toBe(false)
    expect(insideTrim(prism, 0, 0.8, -5)).toBe(true)
  })

  it('below is open: a point on the plane is not below', () => {
    const floor = shape({ shape: 'below', point: [0, 0, 0.25] })
    expect(insideTrim(floor, 3, -2, 0.25)).toBe(false)
    expect(insideTrim(floor, 3, -2, 0.2499)).toBe(true)
    const tilted = shape({ shape: 'below', point: [1, 1, 1], up: [0, 3, 4] })
    expect(insideTrim(tilted, 1, 1 + 4, 1 - 3)).toBe(false)
    expect(insideTrim(tilted, 1, 1, 0.9)).toBe(true)
  })
})

describe('the keep/cut rule on hand-made clouds', () => {
  // Points on the x axis at 0, 1, ..., 9; a box [a, b] along x selects the points a..b.
  const line = Float64Array.from({ length: 30 }, (_, i) => (i % 3 === 0 ? i / 3 : 0))
  const span = (a: number, b: number) => shape({ shape: 'box', centre: [(a + b) / 2, 0, 0], size: [b - a, 1, 1] })
  const kept = (trims: Parameters<typeof trimMask>[1]) => Array.from(keptIndices(line, trimMask(line, trims)))

  it('no trims, or only cuts: everything but the cut points', () => {
    expect(kept([])).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9])
    expect(kept([{ mode: 'cut', shape: span(2, 3) }, { mode: 'cut', shape: span(7, 20) }])).toEqual([0, 1, 4, 5, 6])
  })

  it('one keep: only its points; two overlapping keeps: their union', () => {
    expect(kept([{ mode: 'keep', shape: span(3, 5) }])).toEqual([3, 4, 5])
    expect(kept([{ mode: 'keep', shape: span(1, 4) }, { mode: 'keep', shape: span(3, 6) }])).toEqual([1, 2, 3, 4, 5, 6])
  })

  it('a keep and a cut overlapping: the cut wins, in either order', () => {
    const keep = { mode: 'keep' as const, shape: span(1, 6) }
    const cut = { mode: 'cut' as const, shape: span(5, 8) }
    expect(kept([keep, cut])).toEqual([1, 2, 3, 4])
    expect(kept([cut, keep])).toEqual([1, 2, 3, 4])
  })

  it('keptPoints gives the kept coordinates in order and the given mask is reused', () => {
    const out = new Uint8Array(10).fill(7)
    const mask = trimMask(line, [{ mode: 'keep', shape: span(8, 9) }], out)
    expect(mask).toBe(out)
    expect(Array.from(keptPoints(line, mask))).toEqual([8, 0, 0, 9, 0, 0])
  })

  it('names bad input', () => {
    expect(() => trimMask(new Float64Array(4), [])).toThrow(/x y z triples: 4 numbers/)
    expect(() => trimMask(line, [], new Uint8Array(3))).toThrow(/one byte per point: 3 bytes for 10 points/)
    expect(() => keptPoints(line, new Uint8Array(2))).toThrow(/2 bytes for 10 points/)
  })
})
