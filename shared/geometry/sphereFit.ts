/**
 * The centre of a sphere target of known radius from the stored points on its visible cap: the derived
 * point the trade registers scans by (sphere centres are the derived points of ASTM E3125-17).
 *
 * Frames and units: any one frame, metres; points are x y z interleaved.
 *
 * Method: a start from the algebraic fit |p|^2 = 2 c . p + d (Kasa 1976, IEEE Trans. Instrum. Meas.
 * IM-25(1), from memory), solved by least squares on coordinates centred on their mean; then the geometric
 * fit with the radius held at its stated value, minimising sum (|p - c| - R)^2 over the centre c by
 * Gauss-Newton (the orthogonal-distance criterion of Shakarji 1998, J. Res. NIST 103(6)). The radius is held
 * because a scanner sees at most half a sphere, where radius and centre trade off along the line of sight;
 * a target's radius is stated by its maker. Then one trimming pass: points farther than max(3 RMS, 2 mm)
 * from the sphere (a bracket, a wall behind) are dropped and the fit repeated.
 *
 * Degenerate input is a result, never an exception or a NaN: too few points, points that do not bend
 * like a sphere (a plane: the algebraic radius runs away), or a fit whose RMS is above a quarter of the
 * radius.
 */

export interface SphereFit {
  ok: true
  centre: [number, number, number]
  /** The radius used (the stated one). */
  radius: number
  /** The algebraic fit's own radius, for information. */
  freeRadius: number
  /** sqrt(mean (|p - c| - R)^2) over the points kept, metres. */
  rms: number
  /** Points kept after trimming. */
  count: number
}

export type SphereFitProblem = { ok: false; reason: 'too-few-points' | 'not-a-sphere' | 'poor-fit'; message: string }

export const SPHERE_MIN_POINTS = 10
const GN_ITERATIONS = 30
const TRIM_FLOOR = 0.002
/** The algebraic radius must be within these factors of the stated one (common practice, no source). */
export const RADIUS_RATIO = { min: 0.75, max: 1.33 } as const
/** A fit off by more than this RMS (or a fifteenth of the radius) is not the target, metres. */
const POOR_FIT_FLOOR = 0.004

export function fitSphereKnownRadius(xyz: ArrayLike<number>, radius: number): SphereFit | SphereFitProblem {
  const n = Math.floor(xyz.length / 3)
  if (n < SPHERE_MIN_POINTS) return { ok: false, reason: 'too-few-points', message: `only ${n} points around the pick (at least ${SPHERE_MIN_POINTS} are needed)` }
  const start = algebraicCentre(xyz, n)
  if (!start) return { ok: false, reason: 'not-a-sphere', message: 'the points around the pick do not bend like a sphere' }
  const free = start.radius
  // The algebraic fit of a flat patch gives a huge radius; a sphere of another size is another target (or
  // the wrong radius was entered): either way, not this one.
  if (!(free > radius * RADIUS_RATIO.min && free < radius * RADIUS_RATIO.max)) {
    return { ok: false, reason: 'not-a-sphere', message: `the points bend like a sphere of radius ${(free * 1000).toFixed(0)} mm, not ${(radius * 1000).toFixed(1)} mm` }
  }
  let keep = new Uint8Array(n).fill(1)
  let centre = geometric(xyz, n, keep, start.centre, radius)
  let rms = residualRms(xyz, n, keep, centre, radius)
  const limit = Math.max(3 * rms.rms, TRIM_FLOOR)
  const trimmed = new Uint8Array(n)
  for (let i = 0; i < n; i++) trimmed[i] = Math.abs(distance(xyz, i, centre) - radius) <= limit ? 1 : 0
  const kept = trimmed.reduce((a, b) => a + b, 0)
  if (kept >= SPHERE_MIN_POINTS && kept < n) {
    keep = trimmed
    centre = geometric(xyz, n, keep, centre, radius)
    rms = residualRms(xyz, n, keep, centre, radius)
  }
  if (!(rms.rms <= Math.max(POOR_FIT_FLOOR, radius / 15))) return { ok: false, reason: 'poor-fit', message: `the points lie ${(rms.rms * 1000).toFixed(1)} mm RMS from a sphere of that radius` }
  return { ok: true, centre, radius, freeRadius: free, rms: rms.rms, count: rms.count }
}

function distance(xyz: ArrayLike<number>, i: number, c: readonly number[]): number {
  return Math.hypot(xyz[3 * i]! - c[0]!, xyz[3 * i + 1]! - c[1]!, xyz[3 * i + 2]! - c[2]!)
}

/** Kasa's linear fit: |q|^2 = 2 c . q + d over q = p - mean, a 4x4 normal system solved by Gaussian elimination. */
function algebraicCentre(xyz: ArrayLike<number>, n: number): { centre: [number, number, number]; radius: number } | null {
  let mx = 0, my = 0, mz = 0
  for (let i = 0; i < n; i++) {
    mx += xyz[3 * i]!
    my += xyz[3 * i + 1]!
    mz += xyz[3 * i + 2]!
  }
  mx /= n
  my /= n
  mz /= n
  const a = Array.from({ length: 4 }, () => new Float64Array(5))
  for (let i = 0; i < n; i++) {
    const x = xyz[3 * i]! - mx, y = xyz[3 * i + 1]! - my, z = xyz[3 * i + 2]! - mz
    const row = [2 * x, 2 * y, 2 * z, 1]
    const b = x * x + y * y + z * z
    for (let r = 0; r < 4; r++) {
      for (let c = 0; c < 4; c++) a[r]![c]! += row[r]! * row[c]!
      a[r]![4]! += row[r]! * b
    }
  }
  const s = solve(a, 4)
  if (!s) return null
  const [cx, cy, cz, d] = s as [number, number, number, number]
  const r2 = d + cx * cx + cy * cy + cz * cz
  if (!(r2 > 0)) return null
  return { centre: [cx + mx, cy + my, cz + mz], radius: Math.sqrt(r2) }
}

/** Gauss-Newton on f_i(c) = |p_i - c| - R: J_i = -(p_i - c)/|p_i - c|, step from J^T J dc = -J^T f. */
function geometric(xyz: ArrayLike<number>, n: number, keep: Uint8Array, start: readonly number[], radius: number): [number, number, number] {
  const c: [number, number, number] = [start[0]!, start[1]!, start[2]!]
  for (let it = 0; it < GN_ITERATIONS; it++) {
    const a = Array.from({ length: 3 }, () => new Float64Array(4))
    for (let i = 0; i < n; i++) {
      if (!keep[i]) continue
      const dx = xyz[3 * i]! - c[0], dy = xyz[3 * i + 1]! - c[1], dz = xyz[3 * i + 2]! - c[2]
      const len = Math.hypot(dx, dy, dz)
      if (len === 0) continue
      const j = [-dx / len, -dy / len, -dz / len]
      const f = len - radius
      for (let r = 0; r < 3; r++) {
        for (let k = 0; k < 3; k++) a[r]![k]! += j[r]! * j[k]!
        a[r]![3]! -= j[r]! * f
      }
    }
    const step = solve(a, 3)
    if (!step) break
    c[0] += step[0]!
    c[1] += step[1]!
    c[2] += step[2]!
    if (Math.hypot(step[0]!, step[1]!, step[2]!) < 1e-10) break
  }
  return c
}

function residualRms(xyz: ArrayLike<number>, n: number, keep: Uint8Array, c: readonly number[], radius: number): { rms: number; count: number } {
  let sum = 0, count = 0
  for (let i = 0; i < n; i++) {
    if (!keep[i]) continue
    const e = distance(xyz, i, c) - radius
    sum += e * e
    count++
  }
  return { rms: count ? Math.sqrt(sum / count) : Infinity, count }
}

/** Gaussian elimination with partial pivoting on an augmented m x (m + 1) system; null when singular. */
function solve(a: Float64Array[], m: number): number[] | null {
  let scale = 0
  for (let r = 0; r < m; r++) for (let c = 0; c < m; c++) scale = Math.max(scale, Math.abs(a[r]![c]!))
  if (!(scale > 0)) return null
  for (let col = 0; col < m; col++) {
    let pivot = col
    for (let r = col + 1; r < m; r++) if (Math.abs(a[r]![col]!) > Math.abs(a[pivot]![col]!)) pivot = r
    if (Math.abs(a[pivot]![col]!) <= scale * 1e-14) return null
    if (pivot !== col) [a[pivot], a[col]] = [a[col]!, a[pivot]!]
    for (let r = col + 1; r < m; r++) {
      const f = a[r]![col]! / a[col]![col]!
      for (let c = col; c <= m; c++) a[r]![c]! -= f * a[col]![c]!
    }
  }
  const x = new Array<number>(m).fill(0)
  for (let r = m - 1; r >= 0; r--) {
    let v = a[r]![m]!
    for (let c = r + 1; c < m; c++) v -= a[r]![c]! * x[c]!
    x[r] = v / a[r]![r]!
  }
  return x
}
