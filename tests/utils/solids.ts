// Test geometry (not demo data): surface points of solids with known dimensions, on a regular grid at a given
// spacing with seeded normal noise along each surface's normal, written as binary PLY for upload.
import { writeBinaryPly } from '../../server/points/writers/plyWriter'
import { mulberry32, normal } from '../unit/measure/random'

export class SurfaceSampler {
  readonly xyz: number[] = []
  private readonly gauss: () => number

  constructor(
    readonly spacing: number,
    readonly noise: number,
    seed: number,
  ) {
    this.gauss = normal(mulberry32(seed))
  }

  /**
   * The rectangle origin + a e1 + b e2 (a in [0, la], b in [0, lb]) on a grid, noise along n = e1 x e2,
   * skipping points where `skip(point)` holds.
   */
  rect(origin: number[], e1: number[], la: number, e2: number[], lb: number, skip?: (p: number[]) => boolean): this {
    const n = [e1[1]! * e2[2]! - e1[2]! * e2[1]!, e1[2]! * e2[0]! - e1[0]! * e2[2]!, e1[0]! * e2[1]! - e1[1]! * e2[0]!]
    const na = Math.max(1, Math.round(la / this.spacing)), nb = Math.max(1, Math.round(lb / this.spacing))
    for (let i = 0; i <= na; i++) {
      for (let j = 0; j <= nb; j++) {
        const a = (i / na) * la, b = (j / nb) * lb
        const p = [0, 1, 2].map((k) => origin[k]! + a * e1[k]! + b * e2[k]!)
        if (skip?.(p)) continue
        const e = this.noise * this.gauss()
        this.xyz.push(p[0]! + e * n[0]!, p[1]! + e * n[1]!, p[2]! + e * n[2]!)
      }
    }
    return this
  }

  /** A point list with noise along a given unit normal. */
  point(p: number[], n: number[]): this {
    const e = this.noise * this.gauss()
    this.xyz.push(p[0]! + e * n[0]!, p[1]! + e * n[1]!, p[2]! + e * n[2]!)
    return this
  }

  /**
   * A whole sphere: about one point per spacing^2 of its area on a Fibonacci lattice (even cover without
   * poles), noise along the radius.
   */
  sphere(centre: number[], radius: number): this {
    const n = Math.max(12, Math.round((4 * Math.PI * radius * radius) / (this.spacing * this.spacing)))
    const golden = Math.PI * (3 - Math.sqrt(5))
    for (let i = 0; i < n; i++) {
      const z = 1 - (2 * (i + 0.5)) / n
      const r = Math.sqrt(1 - z * z)
      const a = golden * i
      const u = [r * Math.cos(a), r * Math.sin(a), z]
      this.point([centre[0]! + radius * u[0]!, centre[1]! + radius * u[1]!, centre[2]! + radius * u[2]!], u)
    }
    return this
  }

  /** Every point moved by a column-major rigid matrix (a scan delivered in its station's own frame). */
  transformed(m: readonly number[]): this {
    for (let i = 0; i < this.xyz.length; i += 3) {
      const x = this.xyz[i]!, y = this.xyz[i + 1]!, z = this.xyz[i + 2]!
      this.xyz[i] = m[0]! * x + m[4]! * y + m[8]! * z + m[12]!
      this.xyz[i + 1] = m[1]! * x + m[5]! * y + m[9]! * z + m[13]!
      this.xyz[i + 2] = m[2]! * x + m[6]! * y + m[10]! * z + m[14]!
    }
    return this
  }

  ply(): Buffer {
    return writeBinaryPly({ count: this.xyz.length / 3, positions: Float64Array.from(this.xyz) }, ['test geometry'])
  }
}

const X = [1, 0, 0], Y = [0, 1, 0], Z = [0, 0, 1]

export interface WallOptions {
  /** Clear width and height of a rectangular opening, centred on x = 0, from the floor z = 0. */
  width: number
  height: number
  /** Semicircular head: the opening is jambs up to `height`, then a half circle of radius width / 2. */
  arched?: boolean
  thickness?: number
  spacing?: number
  noise?: number
  seed?: number
}

/**
 * A wall in the plane y = 0 (faces at y = +-t/2) with one opening, the opening's reveal (jambs, head) and a
 * floor from y = -0.6 to 0.6. The clear width is `width`, the clear height `height` (plus width / 2 when arched).
 */
export function wallWithOpening(o: WallOptions): SurfaceSampler {
  const t = o.thickness ?? 0.3, s = new SurfaceSampler(o.spacing ?? 0.01, o.noise ?? 0.001, o.seed ?? 1)
  const w = o.width, h = o.height, R = w / 2
  const top = o.arched ? h + R : h
  const wallW = w + 1.2, wallH = top + 0.5
  const inOpening = (p: number[]) => {
    const x = p[0]!, z = p[2]!
    if (Math.abs(x) >= R - 1e-9) return false
    return z < h - 1e-9 || (o.arched === true && x * x + (z - h) ** 2 < R * R - 1e-9)
  }
  // Wall faces, the opening cut out.
  s.rect([-wallW / 2, -t / 2, 0], X, wallW, Z, wallH, inOpening)
  s.rect([-wallW / 2, t / 2, 0], Z, wallH, X, wallW, inOpening)
  // Jambs (normals pointing into the opening).
  s.rect([-R, -t / 2, 0], Y, t, Z, h)
  s.rect([R, -t / 2, 0], Z, h, Y, t)
  if (o.arched) {
    const steps = Math.ceil((Math.PI * R) / s.spacing)
    const ny = Math.max(1, Math.round(t / s.spacing))
    for (let k = 0; k <= steps; k++) {
      const a = (Math.PI * k) / steps
      for (let j = 0; j <= ny; j++) s.point([R * Math.cos(a), -t / 2 + (j / ny) * t, h + R * Math.sin(a)], [-Math.cos(a), 0, -Math.sin(a)])
    }
  } else s.rect([-R, -t / 2, h], X, w, Y, t)
  // Floor.
  s.rect([-wallW / 2, -0.6, 0], X, wallW, Y, 1.2)
  return s
}

/** The six faces of a box w (x) by d (y) by h (z), centred on x = y = 0, standing on z = 0. */
export function boxSolid(w: number, d: number, h: number, spacing = 0.01, noise = 0.001, seed = 7): SurfaceSampler {
  const s = new SurfaceSampler(spacing, noise, seed)
  s.rect([-w / 2, -d / 2, 0], Y, d, X, w) // bottom
  s.rect([-w / 2, -d / 2, h], X, w, Y, d) // top
  s.rect([-w / 2, -d / 2, 0], X, w, Z, h) // front y = -d/2
  s.rect([-w / 2, d / 2, 0], Z, h, X, w) // back
  s.rect([-w / 2, -d / 2, 0], Z, h, Y, d) // left
  s.rect([w / 2, -d / 2, 0], Y, d, Z, h) // right
  return s
}

/** A drum: a cylinder of radius r and length L with its axis along y, centred on x = 0, z = r, y = 0. */
export function drumSolid(r: number, L: number, spacing = 0.01, noise = 0.001, seed = 11): SurfaceSampler {
  const s = new SurfaceSampler(spacing, noise, seed)
  const steps = Math.ceil((2 * Math.PI * r) / spacing), ny = Math.max(1, Math.round(L / spacing))
  for (let k = 0; k < steps; k++) {
    const a = (2 * Math.PI * k) / steps
    for (let j = 0; j <= ny; j++) s.point([r * Math.cos(a), -L / 2 + (j / ny) * L, r + r * Math.sin(a)], [Math.cos(a), 0, Math.sin(a)])
  }
  for (const y of [-L / 2, L / 2]) {
    for (let rr = spacing; rr < r; rr += spacing) {
      const m = Math.ceil((2 * Math.PI * rr) / spacing)
      for (let k = 0; k < m; k++) {
        const a = (2 * Math.PI * k) / m
        s.point([rr * Math.cos(a), y, r + rr * Math.sin(a)], [0, Math.sign(y), 0])
      }
    }
  }
  return s
}
