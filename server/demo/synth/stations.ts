import { createRandom, gaussian, type Random } from '../../points/stats/random'
import { castRay, nearestEdge, type Surface } from './raycast'

/**
 * Simulated stations of a pan/tilt scanner over a synthetic scene. Angles follow the station log format
 * (server/points/readers/README.md: pan H anticlockwise from the station's +x, tilt V up from horizontal); a station's own frame is the scene
 * frame turned by `heading` about +Z and moved to `position`, which is the frame its file is written in.
 */
export interface StationPose {
  position: [number, number, number]
  headingDeg: number
}

export interface Sweep {
  panFromDeg: number
  panToDeg: number
  tiltFromDeg: number
  tiltToDeg: number
  stepDeg: number
}

export interface Reading {
  panDeg: number
  tiltDeg: number
  /** True range to the surface, or null when the beam finds nothing. */
  range: number | null
  reflectance: number
  cosIncidence: number
  color: [number, number, number]
  /** The beam straddled an edge and its range is a blend of the edge's and the background's (see MixedPixels). */
  mixed: boolean
}

/**
 * Mixed pixels of a time-of-flight rangefinder: where the beam's footprint straddles a surface's edge, part
 * of it returns from the edge and part from what lies behind, and the unit reports a range between the two
 * (Hebert and Krotkov 1992, "3-D measurements from imaging laser radars: how good are they?", Image and Vision
 * Computing 10(3)): stray points along the beam, off the edge into empty space. Modelled here: a reading whose
 * beam centre lands within half a footprint of a rectangle's edge is an edge reading; a share of them look
 * across the edge (one footprint off) for the background and, when there is one farther away, report a range
 * drawn uniformly between the two (the share of the footprint on each is not modelled).
 */
export interface MixedPixels {
  /** Share of edge readings that come back mixed, 0..1. */
  fraction: number
  /** The beam's diameter at the exit (metres) and its full divergence (radians): footprint = exit + divergence x range. */
  exitDiameter: number
  divergence: number
  random: Random
}

const RAD = Math.PI / 180

export function sweepStation(surfaces: readonly Surface[], pose: StationPose, sweep: Sweep, mixed?: MixedPixels): Reading[] {
  const out: Reading[] = []
  const p = new Float64Array(3)
  const across = new Float64Array(3)
  const ch = Math.cos(pose.headingDeg * RAD)
  const sh = Math.sin(pose.headingDeg * RAD)
  const d = new Float64Array(3)
  const panSteps = Math.round((sweep.panToDeg - sweep.panFromDeg) / sweep.stepDeg)
  const tiltSteps = Math.round((sweep.tiltToDeg - sweep.tiltFromDeg) / sweep.stepDeg)
  for (let i = 0; i <= panSteps; i++) {
    const panDeg = sweep.panFromDeg + i * sweep.stepDeg
    for (let j = 0; j <= tiltSteps; j++) {
      const tiltDeg = sweep.tiltFromDeg + j * sweep.stepDeg
      const h = panDeg * RAD
      const v = tiltDeg * RAD
      const lx = Math.cos(v) * Math.cos(h)
      const ly = Math.cos(v) * Math.sin(h)
      d[0] = ch * lx - sh * ly
      d[1] = sh * lx + ch * ly
      d[2] = Math.sin(v)
      const hit = castRay(pose.position, d, surfaces)
      let range = hit ? hit.t : null
      let blended = false
      if (hit && mixed) {
        for (let k = 0; k < 3; k++) p[k] = pose.position[k]! + hit.t * d[k]!
        const footprint = mixed.exitDiameter + mixed.divergence * hit.t
        const edge = nearestEdge(hit.surface, p)
        if (edge && edge.distance < footprint / 2 && mixed.random() < mixed.fraction) {
          for (let k = 0; k < 3; k++) across[k] = p[k]! + edge.outward[k]! * footprint - pose.position[k]!
          const len = Math.hypot(across[0]!, across[1]!, across[2]!)
          for (let k = 0; k < 3; k++) across[k] = across[k]! / len
          const behind = castRay(pose.position, across, surfaces)
          if (behind && behind.t > hit.t + footprint) {
            range = hit.t + mixed.random() * (behind.t - hit.t)
            blended = true
          }
        }
      }
      out.push({
        panDeg: Math.round(panDeg * 1e4) / 1e4,
        tiltDeg: Math.round(tiltDeg * 1e4) / 1e4,
        range,
        reflectance: hit?.surface.reflectance ?? 0,
        cosIncidence: hit?.cosIncidence ?? 0,
        color: hit?.surface.color ?? [0, 0, 0],
        mixed: blended,
      })
    }
  }
  return out
}

/** The point a reading at range r lands on, in the station's own frame. */
export function localPoint(panDeg: number, tiltDeg: number, r: number, out: Float64Array, at: number): void {
  const h = panDeg * RAD
  const v = tiltDeg * RAD
  out[at] = r * Math.cos(v) * Math.cos(h)
  out[at + 1] = r * Math.cos(v) * Math.sin(h)
  out[at + 2] = r * Math.sin(v)
}

/**
 * Range noise of a time-of-flight unit: a floor plus a part growing with range and with steep incidence
 * (common practice, no source; steep incidence degrades precision, Soudarissanane et al. 2009).
 */
export function rangeSigma(r: number, cosIncidence: number, floor: number): number {
  return (floor + 0.0002 * r) / Math.max(0.25, cosIncidence)
}

export { createRandom, gaussian, type Random }
