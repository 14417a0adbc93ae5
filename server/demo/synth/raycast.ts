/**
 * A tiny ray caster for the demo's synthetic scans: axis-aligned rectangles and spheres in a right-handed
 * frame, metres, Z up, optionally gathered in groups behind a bounding box (a ray that misses the box skips
 * the group). It stands in for a scanner's beam hitting a surface; nothing else uses it.
 */
export interface Rect {
  kind: 'rect'
  /** The axis the rectangle is perpendicular to, and its coordinate on that axis. */
  axis: 0 | 1 | 2
  at: number
  /** Extents on the other two axes, in axis order (x before y before z). */
  min: [number, number]
  max: [number, number]
  /** Surface reflectance 0..1 (drives intensity) and colour. */
  reflectance: number
  color: [number, number, number]
}

export interface Sphere {
  kind: 'sphere'
  centre: [number, number, number]
  radius: number
  reflectance: number
  color: [number, number, number]
}

/** Surfaces behind an axis-aligned bounding box that holds them all (a cull: it changes no hit). */
export interface Group {
  kind: 'group'
  min: [number, number, number]
  max: [number, number, number]
  surfaces: Surface[]
}

export type Surface = Rect | Sphere | Group

/** A surface a ray can stop on. */
export type Solid = Rect | Sphere

export interface Hit {
  t: number
  surface: Solid
  /** Cosine of the incidence angle (1 = head on). */
  cosIncidence: number
}

const OTHER: Record<0 | 1 | 2, [number, number]> = { 0: [1, 2], 1: [0, 2], 2: [0, 1] }

/** Nearest hit of the ray o + t d (d a unit vector, t > 0) or null. */
export function castRay(o: ArrayLike<number>, d: ArrayLike<number>, surfaces: readonly Surface[], best: Hit | null = null): Hit | null {
  for (const s of surfaces) {
    if (s.kind === 'group') {
      if (entersBox(o, d, s.min, s.max, best ? best.t : Infinity)) best = castRay(o, d, s.surfaces, best)
    } else if (s.kind === 'rect') {
      const dn = d[s.axis]!
      if (Math.abs(dn) < 1e-12) continue
      const t = (s.at - o[s.axis]!) / dn
      if (t <= 1e-6 || (best && t >= best.t)) continue
      const [a, b] = OTHER[s.axis]
      const pa = o[a]! + t * d[a]!
      const pb = o[b]! + t * d[b]!
      if (pa < s.min[0] || pa > s.max[0] || pb < s.min[1] || pb > s.max[1]) continue
      best = { t, surface: s, cosIncidence: Math.abs(dn) }
    } else {
      const ox = o[0]! - s.centre[0]
      const oy = o[1]! - s.centre[1]
      const oz = o[2]! - s.centre[2]
      const b = ox * d[0]! + oy * d[1]! + oz * d[2]!
      const c = ox * ox + oy * oy + oz * oz - s.radius * s.radius
      const disc = b * b - c
      if (disc < 0) continue
      const t = -b - Math.sqrt(disc)
      if (t <= 1e-6 || (best && t >= best.t)) continue
      const nx = (ox + t * d[0]!) / s.radius
      const ny = (oy + t * d[1]!) / s.radius
      const nz = (oz + t * d[2]!) / s.radius
      best = { t, surface: s, cosIncidence: Math.abs(nx * d[0]! + ny * d[1]! + nz * d[2]!) }
    }
  }
  return best
}

/** Whether the ray o + t d meets the box for some t in (0, tMax) (the slab test, Kay and Kajiya 1986). */
function entersBox(o: ArrayLike<number>, d: ArrayLike<number>, min: readonly number[], max: readonly number[], tMax: number): boolean {
  let t0 = 0
  let t1 = tMax
  for (let k = 0; k < 3; k++) {
    const dk = d[k]!
    if (Math.abs(dk) < 1e-12) {
      if (o[k]! < min[k]! || o[k]! > max[k]!) return false
      continue
    }
    let a = (min[k]! - o[k]!) / dk
    let b = (max[k]! - o[k]!) / dk
    if (a > b) [a, b] = [b, a]
    if (a > t0) t0 = a
    if (b < t1) t1 = b
    if (t0 > t1) return false
  }
  return true
}

/** A group of surfaces behind the bounding box of their corners (rectangles and spheres only inside). */
export function group(surfaces: Solid[]): Group {
  const min: [number, number, number] = [Infinity, Infinity, Infinity]
  const max: [number, number, number] = [-Infinity, -Infinity, -Infinity]
  const take = (k: number, lo: number, hi: number) => {
    min[k] = Math.min(min[k]!, lo)
    max[k] = Math.max(max[k]!, hi)
  }
  for (const s of surfaces) {
    if (s.kind === 'sphere') for (let k = 0; k < 3; k++) take(k, s.centre[k]! - s.radius, s.centre[k]! + s.radius)
    else {
      const [a, b] = OTHER[s.axis]
      take(s.axis, s.at, s.at)
      take(a, s.min[0], s.max[0])
      take(b, s.min[1], s.max[1])
    }
  }
  // A hair wider, so a face on the box's own boundary is never culled by rounding.
  const pad = 1e-6
  return { kind: 'group', min: [min[0] - pad, min[1] - pad, min[2] - pad], max: [max[0] + pad, max[1] + pad, max[2] + pad], surfaces }
}

/**
 * How far a point on a rectangle lies from the rectangle's nearest edge, and the unit direction across that
 * edge (in the rectangle's plane, pointing off it). Spheres have no edge (null): their rim is left clean.
 */
export function nearestEdge(s: Solid, p: ArrayLike<number>): { distance: number; outward: [number, number, number] } | null {
  if (s.kind !== 'rect') return null
  const [a, b] = OTHER[s.axis]
  const gaps: [number, number, number][] = [
    [p[a]! - s.min[0], a, -1],
    [s.max[0] - p[a]!, a, 1],
    [p[b]! - s.min[1], b, -1],
    [s.max[1] - p[b]!, b, 1],
  ]
  let best = gaps[0]!
  for (const g of gaps) if (g[0] < best[0]) best = g
  const outward: [number, number, number] = [0, 0, 0]
  outward[best[1]] = best[2]
  return { distance: Math.max(0, best[0]), outward }
}

/** An axis-aligned box as its six faces (open faces may be left out by name). */
export function boxFaces(min: [number, number, number], max: [number, number, number], look: Pick<Rect, 'reflectance' | 'color'>, skip: string[] = []): Rect[] {
  const faces: Rect[] = []
  for (const axis of [0, 1, 2] as const) {
    const [a, b] = OTHER[axis]
    for (const side of [0, 1] as const) {
      if (skip.includes(`${side ? '+' : '-'}${'xyz'[axis]}`)) continue
      faces.push({ kind: 'rect', axis, at: side ? max[axis] : min[axis], min: [min[a]!, min[b]!], max: [max[a]!, max[b]!], ...look })
    }
  }
  return faces
}
