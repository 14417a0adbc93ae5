// Test geometry (not demo data): sections of known openings and silhouettes of known objects, as a scan
// would give them: surfaces sampled on a grid at a spacing, seeded normal noise along each surface's normal.
import { combineInQuadrature } from '../../../shared/measure/uncertainty'
import { fittedMargin, fittedOpening, fittedOutline, marginEdgeParts } from '../../../shared/measure/edges'
import { freeOpening } from '../../../shared/measure/opening'
import { fitThrough } from '../../../shared/measure/clearance'
import { mulberry32, normal } from './random'

/** Rows of a surface that a slab of this thickness holds (a surface crossing the slab). */
const rowsIn = (slab: number, spacing: number) => Math.max(1, Math.round(slab / spacing) + 1)

function line(out: number[], a: number[], b: number[], spacing: number, rows: number, noise: number, g: () => number) {
  const len = Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!)
  const nx = -(b[1]! - a[1]!) / len, ny = (b[0]! - a[0]!) / len
  const n = Math.max(1, Math.round(len / spacing))
  for (let r = 0; r < rows; r++) {
    for (let k = 0; k <= n; k++) {
      const f = k / n, e = noise * g()
      out.push(a[0]! + f * (b[0]! - a[0]!) + e * nx, a[1]! + f * (b[1]! - a[1]!) + e * ny)
    }
  }
}

/**
 * The section (thickness 4 spacings) through a wall's door w x h, centred on u = 0, floor at v = 0:
 * jambs, head, and the floor running on 0.3 m either side.
 */
export function doorSection(w: number, h: number, spacing: number, noise: number, seed: number): Float64Array {
  const g = normal(mulberry32(seed)), out: number[] = [], rows = rowsIn(4 * spacing, spacing)
  line(out, [-w / 2, 0], [-w / 2, h], spacing, rows, noise, g)
  line(out, [w / 2, 0], [w / 2, h], spacing, rows, noise, g)
  line(out, [-w / 2, h], [w / 2, h], spacing, rows, noise, g)
  line(out, [-w / 2 - 0.3, 0], [w / 2 + 0.3, 0], spacing, rows, noise, g)
  return Float64Array.from(out)
}

/** A box w (u) x d (along travel) x hh (v) standing on v = 0, centred on u = 0, seen along the travel. */
export function boxSilhouette(w: number, d: number, hh: number, spacing: number, noise: number, seed: number): Float64Array {
  const g = normal(mulberry32(seed)), out: number[] = [], rows = rowsIn(d, spacing)
  line(out, [-w / 2, 0], [-w / 2, hh], spacing, rows, noise, g)
  line(out, [w / 2, 0], [w / 2, hh], spacing, rows, noise, g)
  line(out, [-w / 2, hh], [w / 2, hh], spacing, rows, noise, g)
  line(out, [-w / 2, 0], [w / 2, 0], spacing, rows, noise, g)
  // Front and back faces: noise along the travel, so they fill the outline exactly.
  const nu = Math.round(w / spacing), nv = Math.round(hh / spacing)
  for (let f = 0; f < 2; f++) for (let i = 0; i <= nu; i++) for (let j = 0; j <= nv; j++) out.push(-w / 2 + (i / nu) * w, (j / nv) * hh)
  return Float64Array.from(out)
}

/** A drum of radius r and length L lying with its axis along the travel, resting on v = 0. */
export function drumSilhouette(r: number, L: number, spacing: number, noise: number, seed: number): Float64Array {
  const g = normal(mulberry32(seed)), out: number[] = [], rows = rowsIn(L, spacing)
  const steps = Math.ceil((2 * Math.PI * r) / spacing)
  for (let j = 0; j < rows; j++) {
    for (let k = 0; k < steps; k++) {
      const a = (2 * Math.PI * k) / steps, rr = r + noise * g()
      out.push(rr * Math.cos(a), r + rr * Math.sin(a))
    }
  }
  for (let f = 0; f < 2; f++) {
    for (let rr = spacing; rr < r - spacing / 2; rr += spacing) {
      const m = Math.ceil((2 * Math.PI * rr) / spacing)
      for (let k = 0; k < m; k++) out.push(rr * Math.cos((2 * Math.PI * k) / m), r + rr * Math.sin((2 * Math.PI * k) / m))
    }
  }
  return Float64Array.from(out)
}

export interface TrialFigures {
  width: { value: number; U: number }
  height: { value: number; U: number }
  margin: { value: number; U: number }
}

/**
 * One trial: a door's section, an object's silhouette placed as it stands (translated, not turned), the
 * same math and budget lines as server/markers/check.ts.
 */
export function doorTrial(
  door: { w: number; h: number },
  object: 'box' | 'drum',
  spacing: number,
  noise: number,
  seed: number,
): TrialFigures {
  const uv = doorSection(door.w, door.h, spacing, noise, seed)
  const opening = freeOpening(uv, [0, door.h / 2], spacing)
  if (!opening.ok) throw new Error(`opening: ${opening.reason}`)
  const edges = fittedOpening(opening, noise)
  if (!edges.ok) throw new Error(`edges: ${edges.edge}`)
  const sil = object === 'box' ? boxSilhouette(0.6, 0.4, 1.2, spacing, noise, seed + 7919) : drumSilhouette(0.3, 0.8, spacing, noise, seed + 7919)
  const outline = fittedOutline(sil, noise, spacing)
  if (!outline.ok) throw new Error('outline')
  const fit = fitThrough(opening, outline.xy, 0, 0, { maxTurnDegrees: 0 })
  if (!fit.ok) throw new Error(fit.reason)
  const m = fittedMargin(opening, fit.placed, noise)
  if (!m.ok) throw new Error('margin')
  const wB = combineInQuadrature([{ name: 'edge fits', u: edges.uWidth }])
  const hB = combineInQuadrature([{ name: 'edge fits', u: edges.uHeight }])
  const mB = combineInQuadrature(marginEdgeParts(m, outline))
  if (!wB.ok || !hB.ok || !mB.ok) throw new Error('budget')
  return {
    width: { value: edges.clearWidth, U: wB.expanded },
    height: { value: edges.clearHeight, U: hB.expanded },
    margin: { value: m.margin, U: mB.expanded },
  }
}
