/**
 * A tiny ray caster for the demo's synthetic scans: axis-aligned rectangles and spheres in a right-handed
 * frame, metres, Z up. It stands in for a scanner's beam hitting a surface; nothing else uses it.
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

export type Surface = Rect | Sphere

export interface Hit {
  t: number
  surface: Surface
  /** Cosine of the incidence angle (1 = head on). */
  cosIncidence: number
}

const OTHER: Record<0 | 1 | 2, [number, number]> = { 0: [1, 2], 1: [0, 2], 2: [0, 1] }

/** Nearest hit of the ray o + t d (d a unit vector, t > 0) or null. */
export function castRay(o: ArrayLike<number>, d: ArrayLike<number>, surfaces: readonly Surface[]): Hit | null {
  let best: Hit | null = null
  for (const s of surfaces) {
    if (s.kind === 'rect') {
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
