// Test geometry (not demo data): section points round synthetic openings, sampled at a spacing with seeded
// uniform noise across the surface.
import { mulberry32 } from './random'

/** Points on the segment a-b every `spacing`, each moved by uniform noise in [-noise, noise] along both axes. */
function line(out: number[], a: number[], b: number[], spacing: number, noise: number, rand: () => number) {
  const len = Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!)
  const n = Math.max(1, Math.round(len / spacing))
  for (let k = 0; k <= n; k++) {
    const f = k / n
    out.push(a[0]! + f * (b[0]! - a[0]!) + noise * (2 * rand() - 1), a[1]! + f * (b[1]! - a[1]!) + noise * (2 * rand() - 1))
  }
}

/** Rectangular doorway 0 <= u <= w, 0 <= v <= h: jambs, head and floor (floor and head run on past the jambs). */
export function doorway(w: number, h: number, spacing: number, noise: number, seed = 1, floor = true): Float64Array {
  const rand = mulberry32(seed), out: number[] = []
  line(out, [0, 0], [0, h], spacing, noise, rand)
  line(out, [w, 0], [w, h], spacing, noise, rand)
  line(out, [-0.2, h], [w + 0.2, h], spacing, noise, rand)
  if (floor) line(out, [-0.2, 0], [w + 0.2, 0], spacing, noise, rand)
  return Float64Array.from(out)
}

/** Arched doorway centred on u = 0: jambs at u = +-R up to the springing height s, semicircular head of radius R. */
export function archway(R: number, s: number, spacing: number, noise: number, seed = 2): Float64Array {
  const rand = mulberry32(seed), out: number[] = []
  line(out, [-R, 0], [-R, s], spacing, noise, rand)
  line(out, [R, 0], [R, s], spacing, noise, rand)
  line(out, [-R - 0.2, 0], [R + 0.2, 0], spacing, noise, rand)
  const n = Math.ceil((Math.PI * R) / spacing)
  for (let k = 0; k <= n; k++) {
    const a = (Math.PI * k) / n
    out.push(R * Math.cos(a) + noise * (2 * rand() - 1), s + R * Math.sin(a) + noise * (2 * rand() - 1))
  }
  return Float64Array.from(out)
}

/** Box silhouette w x h centred at (cu, cv), boundary sampled with about `count` points. */
export function box(w: number, h: number, cu: number, cv: number, count = 200): Float64Array {
  const out: number[] = []
  const per = 2 * (w + h) / count
  const corners = [[-w / 2, -h / 2], [w / 2, -h / 2], [w / 2, h / 2], [-w / 2, h / 2]]
  for (let c = 0; c < 4; c++) {
    const a = corners[c]!, b = corners[(c + 1) % 4]!
    const n = Math.max(1, Math.round(Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!) / per))
    for (let k = 0; k < n; k++) out.push(cu + a[0]! + (k / n) * (b[0]! - a[0]!), cv + a[1]! + (k / n) * (b[1]! - a[1]!))
  }
  return Float64Array.from(out)
}

export function disc(radius: number, cu: number, cv: number, count = 200): Float64Array {
  const out: number[] = []
  for (let k = 0; k < count; k++) {
    const a = (2 * Math.PI * k) / count
    out.push(cu + radius * Math.cos(a), cv + radius * Math.sin(a))
  }
  return Float64Array.from(out)
}
