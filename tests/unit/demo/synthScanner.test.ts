// The demo's synthetic scanner (server/demo/synth): its bounding-box groups are a cull that changes no hit
// (checked against casting the same rays at the flat list of surfaces, brute force), and its mixed pixels
// behave as Hebert and Krotkov (1992, "3-D measurements from imaging laser radars: how good are they?",
// Image and Vision Computing 10(3)) describe them: only where the beam's footprint straddles an edge, each
// on its own beam, at a range between the edge's and the background's.
import { describe, expect, it } from 'vitest'
import { boxFaces, castRay, group, type Solid, type Surface } from '../../../server/demo/synth/raycast'
import { createRandom, localPoint, sweepStation, type StationPose } from '../../../server/demo/synth/stations'
import { CHEST, CHEST_AT, TROLLEY, chestOnTrolley, yardSurfaces } from '../../../server/demo/synth/scene'

const flat = (surfaces: readonly Surface[]): Solid[] => surfaces.flatMap((s) => (s.kind === 'group' ? flat(s.surfaces) : [s]))

describe('the synthetic scanner', () => {
  it('finds the same nearest hit with its groups as with every surface tried in turn', () => {
    const grouped = yardSurfaces()
    const all = flat(grouped)
    const chest = new Set(flat(grouped.filter((s) => s.kind === 'group' && s.surfaces.length > 20)))
    expect(chest.size).toBe(flat([chestOnTrolley()]).length)
    expect(all.length).toBeGreaterThan(grouped.length)
    const random = createRandom(7)
    let chestHits = 0
    const differ: string[] = []
    for (let i = 0; i < 10_000; i++) {
      // Rays from points of the yard towards the chest, the door and everything else.
      const o = [-4 + 8 * random(), -6 + 5.5 * random(), 0.2 + 2.5 * random()]
      const aim = [CHEST_AT[0] + 3 * (random() - 0.5), CHEST_AT[1] + 3 * (random() - 0.5), random()]
      const d = aim.map((v, k) => v - o[k]!)
      const len = Math.hypot(...d)
      const u = d.map((v) => v / len)
      const a = castRay(o, u, grouped)
      const b = castRay(o, u, all)
      if ((a?.t ?? null) !== (b?.t ?? null) || (a?.surface ?? null) !== (b?.surface ?? null)) differ.push(`ray ${i}: ${a?.t} against ${b?.t}`)
      if (a && chest.has(a.surface)) chestHits++
    }
    expect(differ).toEqual([])
    expect(chestHits).toBeGreaterThan(500)
  })

  it('puts mixed pixels only where the beam straddles an edge, on the beam, between the edge and the background', () => {
    // A plate 1 m in front of a wall, seen head-on from 3 m; a sweep across its right edge.
    const plate = boxFaces([-1, -2.01, -1], [0, -2, 1], { reflectance: 0.5, color: [1, 1, 1] })
    const wall = boxFaces([-5, 1, -5], [5, 1.01, 5], { reflectance: 0.5, color: [1, 1, 1] })
    const surfaces = [...plate, ...wall]
    const pose: StationPose = { position: [0, -5, 0], headingDeg: 90 }
    const exitDiameter = 0.004
    const divergence = 0.001
    const fraction = 0.4
    const sweep = { panFromDeg: -2, panToDeg: 2, tiltFromDeg: -0.5, tiltToDeg: 0.5, stepDeg: 0.02 }
    const readings = sweepStation(surfaces, pose, sweep, { fraction, exitDiameter, divergence, random: createRandom(3) })
    const cleanReadings = sweepStation(surfaces, pose, sweep)
    const p = new Float64Array(3)
    let edgeReadings = 0
    let mixed = 0
    const wrong: string[] = []
    for (const [i, r] of readings.entries()) {
      const clean = cleanReadings[i]!
      // On the plate (3 m), its beam's centre within half a footprint of the plate's right edge (x = 0).
      localPoint(r.panDeg, r.tiltDeg, clean.range!, p, 0)
      const onPlate = clean.range! < 4
      const footprint = exitDiameter + divergence * clean.range!
      const xAtPlate = -p[1]! // the station looks along +y of the scene: its local y is the scene's -x
      const straddles = onPlate && Math.abs(xAtPlate - 0) < footprint / 2 && Math.abs(p[2]!) < 1 - footprint
      if (straddles) edgeReadings++
      const at = `pan ${r.panDeg}, tilt ${r.tiltDeg}`
      if (!r.mixed) {
        if (r.range !== clean.range) wrong.push(`${at}: not mixed, yet its range moved`)
        continue
      }
      mixed++
      if (!straddles) wrong.push(`${at}: mixed, not at the edge`)
      // Same beam (pan, tilt), range strictly between the plate's (3 m) and the wall's (6 m) along it.
      if (!(r.range! > clean.range! && r.range! < clean.range! * 2.01)) wrong.push(`${at}: mixed range ${r.range} not between ${clean.range} and the wall`)
    }
    expect(wrong).toEqual([])
    expect(edgeReadings).toBeGreaterThan(50)
    // About `fraction` of edge readings come back mixed (binomial: within 4 standard deviations).
    const sd = Math.sqrt(edgeReadings * fraction * (1 - fraction))
    expect(Math.abs(mixed - fraction * edgeReadings)).toBeLessThan(4 * sd)
  })

  it('stands the chest on a trolley a little smaller than its footprint, 0.10 to 0.15 m high', () => {
    const solids = flat([chestOnTrolley()])
    const lo = [Infinity, Infinity, Infinity]
    const hi = [-Infinity, -Infinity, -Infinity]
    for (const s of solids) {
      if (s.kind !== 'rect') continue
      const other = ([[1, 2], [0, 2], [0, 1]] as const)[s.axis]
      lo[s.axis] = Math.min(lo[s.axis]!, s.at), hi[s.axis] = Math.max(hi[s.axis]!, s.at)
      for (const j of [0, 1] as const) (lo[other[j]] = Math.min(lo[other[j]]!, s.min[j])), (hi[other[j]] = Math.max(hi[other[j]]!, s.max[j]))
    }
    expect(hi[0]! - lo[0]!).toBeCloseTo(CHEST.length, 9)
    expect(hi[1]! - lo[1]!).toBeCloseTo(CHEST.depth, 9)
    expect(hi[2]!).toBeCloseTo(CHEST_AT[2] + TROLLEY.height + CHEST.height, 9)
    expect(TROLLEY.height).toBeGreaterThanOrEqual(0.1)
    expect(TROLLEY.height).toBeLessThanOrEqual(0.15)
    expect(TROLLEY.length).toBeLessThan(CHEST.length)
    expect(TROLLEY.depth).toBeLessThan(CHEST.depth)
    // The castors' balls touch the floor.
    for (const s of solids) if (s.kind === 'sphere') expect(s.centre[2] - s.radius).toBeCloseTo(CHEST_AT[2], 9)
  })
})
