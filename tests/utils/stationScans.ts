// Test geometry (not demo data): an object on a floor scanned from several stations by the project's own ray
// caster (server/demo/synth/raycast.ts), each station's beams cast once; a trial adds range noise along each beam
// and a registration error per station (a translation), then trims the points as a person would (a keep box
// round the object and a floor cut), giving the object's kept points and what the trims took away near them.
import { castRay, type Surface } from '../../server/demo/synth/raycast'
import { mulberry32, normal } from '../unit/measure/random'

/** A vertical cylinder (a drum standing on its end): axis through (cx, cy), from z0 to z1. */
export interface Upright {
  kind: 'upright'
  centre: [number, number]
  radius: number
  z0: number
  z1: number
}

export interface Station {
  position: [number, number, number]
  /** Pan and tilt limits (degrees, pan anticlockwise from +x, tilt up from level) and the angular step. */
  pan: [number, number]
  tilt: [number, number]
  stepDeg: number
}

/** The beams of one station that hit something: unit directions and true ranges. */
export interface StationBeams {
  origin: [number, number, number]
  dirs: Float64Array
  ranges: Float64Array
}

const RAD = Math.PI / 180

/** Nearest hit of a ray on an upright cylinder's side and its flat top (or null). */
function castUpright(o: ArrayLike<number>, d: ArrayLike<number>, c: Upright): number | null {
  let best: number | null = null
  const ox = o[0]! - c.centre[0], oy = o[1]! - c.centre[1]
  const a = d[0]! * d[0]! + d[1]! * d[1]!
  if (a > 1e-12) {
    const b = ox * d[0]! + oy * d[1]!, q = ox * ox + oy * oy - c.radius * c.radius
    const disc = b * b - a * q
    if (disc >= 0) {
      const t = (-b - Math.sqrt(disc)) / a
      const z = o[2]! + t * d[2]!
      if (t > 1e-6 && z >= c.z0 && z <= c.z1) best = t
    }
  }
  if (Math.abs(d[2]!) > 1e-12) {
    const t = (c.z1 - o[2]!) / d[2]!
    const x = ox + t * d[0]!, y = oy + t * d[1]!
    if (t > 1e-6 && x * x + y * y <= c.radius * c.radius && (best === null || t < best)) best = t
  }
  return best
}

/** Casts every beam of each station over the surfaces (and upright cylinders): done once per geometry. */
export function castStations(stations: readonly Station[], surfaces: readonly Surface[], uprights: readonly Upright[] = []): StationBeams[] {
  return stations.map((s) => {
    const dirs: number[] = [], ranges: number[] = []
    const d = new Float64Array(3)
    const np = Math.round((s.pan[1] - s.pan[0]) / s.stepDeg), nt = Math.round((s.tilt[1] - s.tilt[0]) / s.stepDeg)
    for (let i = 0; i <= np; i++) {
      const h = (s.pan[0] + i * s.stepDeg) * RAD
      for (let j = 0; j <= nt; j++) {
        const v = (s.tilt[0] + j * s.stepDeg) * RAD
        d[0] = Math.cos(v) * Math.cos(h)
        d[1] = Math.cos(v) * Math.sin(h)
        d[2] = Math.sin(v)
        let t = castRay(s.position, d, surfaces)?.t ?? null
        for (const c of uprights) {
          const tc = castUpright(s.position, d, c)
          if (tc !== null && (t === null || tc < t)) t = tc
        }
        if (t === null) continue
        dirs.push(d[0], d[1], d[2])
        ranges.push(t)
      }
    }
    return { origin: s.position, dirs: Float64Array.from(dirs), ranges: Float64Array.from(ranges) }
  })
}

/** Stations at `distance` from (cx, cy), `height` up, at the given headings (degrees), aimed at a box of half-size `reach`. */
export function stationsAround(cx: number, cy: number, distance: number, height: number, headings: readonly number[], reach: number, stepDeg: number): Station[] {
  return headings.map((deg) => {
    const a = deg * RAD
    const position: [number, number, number] = [cx + distance * Math.cos(a), cy + distance * Math.sin(a), height]
    const look = deg + 180
    const half = (Math.atan2(reach, distance - reach) * 180) / Math.PI
    return { position, pan: [look - half, look + half], tilt: [-(Math.atan2(height, distance - 1.5 * reach) * 180) / Math.PI, -2], stepDeg }
  })
}

/** A trim as a person draws one: a keep box round the object (level, turned by `turnDeg`) and a floor cut. */
export interface Trim {
  centre: [number, number]
  half: [number, number]
  turnDeg: number
  cutBelow: number
}

export interface TrialScan {
  /** The object's kept points, members (stations) one after another. */
  points: Float64Array
  /** What the trims took away within `aroundReach` of the kept points' bounding box, members in order. */
  around: Float64Array
  counts: number[]
  aroundCounts: number[]
}

/** One trial: range noise `sigma` along each beam, each station moved by a registration error of `regU` per axis. */
export function trialScan(beams: readonly StationBeams[], trim: Trim, sigma: number, regU: number, seed: number, aroundReach = 0.3): TrialScan {
  const gauss = normal(mulberry32(seed))
  const c = Math.cos(trim.turnDeg * RAD), s = Math.sin(trim.turnDeg * RAD)
  const kept: number[][] = [], cut: number[][] = []
  for (const b of beams) {
    const e = [regU * gauss(), regU * gauss(), regU * gauss()]
    const k: number[] = [], x: number[] = []
    for (let i = 0; i < b.ranges.length; i++) {
      const r = b.ranges[i]! + sigma * gauss()
      const p = [0, 1, 2].map((a) => b.origin[a]! + r * b.dirs[3 * i + a]! + e[a]!)
      const dx = p[0]! - trim.centre[0], dy = p[1]! - trim.centre[1]
      const inside = Math.abs(dx * c + dy * s) <= trim.half[0] && Math.abs(-dx * s + dy * c) <= trim.half[1] && p[2]! >= trim.cutBelow
      ;(inside ? k : x).push(p[0]!, p[1]!, p[2]!)
    }
    kept.push(k)
    cut.push(x)
  }
  let lo = [Infinity, Infinity, Infinity], hi = [-Infinity, -Infinity, -Infinity]
  for (const k of kept) for (let i = 0; i < k.length; i += 3) for (let a = 0; a < 3; a++) (lo[a] = Math.min(lo[a]!, k[i + a]!)), (hi[a] = Math.max(hi[a]!, k[i + a]!))
  lo = lo.map((v) => v - aroundReach)
  hi = hi.map((v) => v + aroundReach)
  const near = cut.map((x) => {
    const out: number[] = []
    for (let i = 0; i < x.length; i += 3) if ([0, 1, 2].every((a) => x[i + a]! >= lo[a]! && x[i + a]! <= hi[a]!)) out.push(x[i]!, x[i + 1]!, x[i + 2]!)
    return out
  })
  return {
    points: Float64Array.from(kept.flat()),
    around: Float64Array.from(near.flat()),
    counts: kept.map((k) => k.length / 3),
    aroundCounts: near.map((k) => k.length / 3),
  }
}
