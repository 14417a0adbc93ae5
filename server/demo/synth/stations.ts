import { createRandom, gaussian, type Random } from '../../points/stats/random'
import { castRay, type Surface } from './raycast'

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
}

const RAD = Math.PI / 180

export function sweepStation(surfaces: readonly Surface[], pose: StationPose, sweep: Sweep): Reading[] {
  const out: Reading[] = []
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
      out.push({
        panDeg: Math.round(panDeg * 1e4) / 1e4,
        tiltDeg: Math.round(tiltDeg * 1e4) / 1e4,
        range: hit ? hit.t : null,
        reflectance: hit?.surface.reflectance ?? 0,
        cosIncidence: hit?.cosIncidence ?? 0,
        color: hit?.surface.color ?? [0, 0, 0],
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
