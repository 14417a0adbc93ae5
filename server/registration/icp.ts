import { Matrix, SingularValueDecomposition } from 'ml-matrix'
import { multiplyRigid, rigidProblem, transformPoint, type Matrix4 } from '@shared/geometry/rigidTransform'
import { symmetricEigen3, type SymmetricEigen3 } from '@shared/geometry/symmetricEigen3'
import { KBest } from '../points/index/kBest'
import { UniformGrid } from '../points/index/uniformGrid'
import { createRandom, sampleIndices } from '../points/stats/random'

/**
 * ICP refinement of one scan against another (shared/measure/README.md, "Registration"): point-to-plane ICP
 * (Chen and Medioni 1992, Image and Vision Computing 10(3)) with the small-angle linearisation of each step
 * (Low 2004, UNC TR04-004), outliers rejected by a fixed distance threshold (Rusinkiewicz and Levoy 2001,
 * 3DIM), and a step accepted only if it does not raise the RMS, so the RMS never increases (the property
 * Besl and McKay 1992, IEEE TPAMI 14(2), prove for point-to-point ICP, made true here by construction).
 *
 * Frames: the target (held scan) and the moving scan are x y z interleaved in float64, each in its own
 * array's frame, metres. The matrices (start and result) are column-major rigid (shared/geometry/
 * rigidTransform.ts) and map moving-array coordinates into target-array coordinates. For two placements
 * P_held and P_moving in a scene and a scene-frame correction C (the closed-form fit), the start is
 * inverse(P_held) C P_moving and the refined placement is P_held M.
 *
 * One pass (also "evaluating" a matrix M): every subsampled moving point p goes to q = M p; its partner
 * is the nearest target point t (UniformGrid + KBest, exact nearest) when |q - t| <= maxDistance,
 * otherwise it has none. Accepted pairs = points with a partner; overlap = accepted / subsampled.
 * Two RMS figures, both over accepted pairs:
 * - `rms`, the one ICP minimises and the one guaranteed never to increase: point-to-plane,
 *   sqrt(mean ((q - t) . n)^2) over the accepted pairs whose partner has a normal (`fitted`). It measures
 *   how well the surfaces agree, about sqrt(2) times the noise once converged, whatever the point spacing;
 * - `pointRms`: point-to-point sqrt(mean |q - t|^2), for information only. It also holds the sideways
 *   offset between two different samplings of one surface (about half the target's spacing), so it does
 *   not settle to the noise and is not monotone.
 * Pairs whose partner has no normal (a neighbourhood that does not span a plane) count in the overlap and
 * pointRms but not in the fit or `rms`.
 *
 * One iteration: from the current pairs, minimise sum ((q - t) . n + (w x (q - c)) . n + tau . n)^2 over
 * the rotation vector w and translation tau (rotation about c, the moved sample's centroid, so that far-off
 * coordinates keep the 6x6 system well conditioned; the rotation columns are scaled by the sample's radius so
 * that all six unknowns are in metres). The 6x6 normal equations are solved by SVD with singular values
 * below 1e-9 of the largest dropped, so a direction the surfaces do not constrain (a bare plane, a corridor)
 * gets no motion instead of a wild one. The step is applied as an exact rotation (Rodrigues) of angle |w|.
 *
 * Acceptance and the RMS guarantee: the candidate matrix is evaluated (a full pass, which is also the next
 * iteration's pairing: the pairs are re-found, so the linearised step alone does not guarantee a lower
 * RMS). The step is accepted when it keeps at least MIN_PAIRS fitted pairs and its `rms` is <= the current
 * `rms`; otherwise it is halved, up to HALVINGS times; if none is accepted the run stops and keeps the
 * current matrix. So `iterations[k + 1].rms <= iterations[k].rms` for every k, exactly (both numbers are
 * the reported ones). A step that would take in more partners at a higher RMS is refused too: set
 * maxDistance to cover the start's misalignment plus a few times the noise.
 *
 * Convergence rule (checked after each accepted step, in this order):
 * - 'step below limits': the accepted step turned by less than rotationToleranceDegrees and moved the
 *   sample's centroid by less than translationTolerance;
 * - 'rms settled': the RMS fell by less than rmsTolerance (relative) in that step;
 * - stop without a new step when even the smallest halving raises the RMS ('no step lowers the RMS'):
 *   converged is true when the proposed full step was within 10x the step limits (the step is then at the
 *   level of the pairing's noise, and is tried whole only, without halvings), false otherwise;
 * - the iteration cap (maxIterations accepted steps): converged false.
 * Other stops (converged false): too few pairs at the start, or a step the pairs do not constrain at all.
 *
 * iterations[0] is the start matrix's evaluation; iterations[k] follows the k-th accepted step, so there
 * are at most maxIterations + 1 entries. The progress callback gets each entry as it is made.
 *
 * Event loop: the run is async and yields (setImmediate) at the start of every pass and, within a pass,
 * once YIELD_MS (15 ms) have gone by, checked every PASS_CHUNK (1024) moving points; the abort signal is checked
 * at every yield (an aborted run rejects with the signal's reason, an AbortError by default). On the bench's
 * 1 M-point room (2 cores) the longest stretch between yields was about 30 ms.
 */

export interface IcpTargetOptions {
  /** Neighbours per normal, the point itself included (default 12; at least 3). */
  neighbours?: number
  /** Fit every normal now rather than when a moving point first pairs with it (default false). */
  eagerNormals?: boolean
}

export interface IcpOptions {
  /** Start matrix, moving -> target (default identity). */
  start?: Matrix4
  /** Pairs farther apart are rejected as outliers, metres (default 0.1). */
  maxDistance?: number
  /** Moving points used, a seeded uniform random subsample (default 40 000). */
  sampleCap?: number
  /** Seed of the subsample (default 1). */
  seed?: number
  /** Accepted steps at most (default 50). */
  maxIterations?: number
  /** Degrees (default 2e-4: 35 um at 10 m). */
  rotationToleranceDegrees?: number
  /** Metres (default 2e-5). */
  translationTolerance?: number
  /** Relative RMS decrease below which the run has settled (default 1e-6). */
  rmsTolerance?: number
  onProgress?: (progress: IcpProgress) => void
  signal?: AbortSignal
}

export interface IcpIteration {
  /** Point-to-plane RMS over the fitted pairs, metres (0 when there are none); never increases. */
  rms: number
  /** Point-to-point RMS over the accepted pairs, metres (0 when there are none); for information. */
  pointRms: number
  /** Accepted pairs over subsampled moving points. */
  overlap: number
  /** Accepted pairs (a partner within maxDistance). */
  pairs: number
  /** Accepted pairs whose partner has a normal: the ones in the fit and in `rms`. */
  fitted: number
}

export interface IcpProgress extends IcpIteration {
  /** 0 for the start matrix, k after the k-th accepted step. */
  iteration: number
}

export interface IcpResult {
  /** Column-major, moving -> target. */
  matrix: number[]
  iterations: IcpIteration[]
  converged: boolean
  reason: string
  finalRms: number
  overlap: number
  /** Moving points used (after subsampling). */
  sampleCount: number
  maxDistance: number
}

export const DEFAULT_NEIGHBOURS = 12
export const DEFAULT_MAX_DISTANCE = 0.1
export const DEFAULT_SAMPLE_CAP = 40_000
export const DEFAULT_MAX_ITERATIONS = 50
/** Fewer accepted pairs than this cannot carry a 6-unknown step with any redundancy. */
export const MIN_PAIRS = 12
const HALVINGS = 4
const PASS_CHUNK = 1024
const YIELD_MS = 15
const STALL_FACTOR = 10
/** Same rule as shared/geometry/planeFit.ts: no plane when the middle eigenvalue is this small. */
const COLLINEAR_RATIO = 1e-12
const SINGULAR_RATIO = 1e-9
// Scans are surfaces in a mostly empty box: half a point per cell of the box's volume gives surface cells
// a handful of points each (measured on the bench's room: 0.5 ran ICP about 25 % faster than 2 or 0.125).
const GRID_OPTIONS = { pointsPerCell: 0.5, maxCells: 1 << 23 }

const NORMAL_UNKNOWN = 0
const NORMAL_OK = 1
const NORMAL_NONE = 2

/**
 * The held scan, ready for pairing: its points, a UniformGrid over them (built once, O(n)) and a normal per
 * point from a PCA plane fit of its k nearest points (Shakarji 1998; the smallest eigenvector of the 3x3
 * covariance, by the project's Jacobi solver), fitted on first use and kept, since a run only ever pairs
 * with a small part of a large scan. Build one per scan pair and reuse it across runs.
 */
export class IcpTarget {
  readonly points: Float64Array
  readonly count: number
  readonly grid: UniformGrid
  readonly neighbours: number
  /** Unit normals, 3 a point (sign arbitrary: point-to-plane does not care). */
  private readonly normals: Float32Array
  private readonly state: Uint8Array
  private readonly heap: KBest
  private readonly eigen: SymmetricEigen3 = { values: new Float64Array(3), vectors: new Float64Array(9) }

  constructor(points: Float64Array, neighbours: number) {
    this.points = points
    this.count = points.length / 3
    this.neighbours = neighbours
    this.grid = new UniformGrid(points, this.count, [0, 0, 0], GRID_OPTIONS)
    this.normals = new Float32Array(points.length)
    this.state = new Uint8Array(this.count)
    this.heap = new KBest(neighbours)
  }

  /** Whether point i has a normal; fits it the first time. The normal is then at normalArray[3 i ..]. */
  hasNormal(i: number): boolean {
    let s = this.state[i]!
    if (s === NORMAL_UNKNOWN) s = this.fitNormal(i)
    return s === NORMAL_OK
  }

  get normalArray(): Float32Array {
    return this.normals
  }

  /** Point i's unit normal, or null when its neighbourhood does not span a plane (allocates: not for loops). */
  normalAt(i: number): [number, number, number] | null {
    if (!Number.isInteger(i) || i < 0 || i >= this.count) throw new RangeError(`no target point ${i}`)
    return this.hasNormal(i) ? [this.normals[3 * i]!, this.normals[3 * i + 1]!, this.normals[3 * i + 2]!] : null
  }

  /** Fits every normal not fitted yet. */
  fitAllNormals(): void {
    for (let i = 0; i < this.count; i++) if (this.state[i] === NORMAL_UNKNOWN) this.fitNormal(i)
  }

  /** Normals fitted so far (for figures). */
  fittedNormals(): number {
    let n = 0
    for (let i = 0; i < this.count; i++) if (this.state[i] !== NORMAL_UNKNOWN) n++
    return n
  }

  private fitNormal(i: number): number {
    const p = this.points
    const heap = this.heap
    heap.reset()
    this.grid.nearest(p[3 * i]!, p[3 * i + 1]!, p[3 * i + 2]!, heap)
    const n = heap.size
    let state = NORMAL_NONE
    if (n >= 3) {
      let cx = 0, cy = 0, cz = 0
      for (let s = 0; s < n; s++) {
        cx += heap.xs[s]!
        cy += heap.ys[s]!
        cz += heap.zs[s]!
      }
      cx /= n
      cy /= n
      cz /= n
      let xx = 0, xy = 0, xz = 0, yy = 0, yz = 0, zz = 0
      for (let s = 0; s < n; s++) {
        const dx = heap.xs[s]! - cx, dy = heap.ys[s]! - cy, dz = heap.zs[s]! - cz
        xx += dx * dx; xy += dx * dy; xz += dx * dz
        yy += dy * dy; yz += dy * dz; zz += dz * dz
      }
      const e = symmetricEigen3(xx, xy, xz, yy, yz, zz, this.eigen)
      if (e.values[2]! > 0 && e.values[1]! > e.values[2]! * COLLINEAR_RATIO) {
        const v = e.vectors
        const len = Math.hypot(v[0]!, v[1]!, v[2]!)
        this.normals[3 * i] = v[0]! / len
        this.normals[3 * i + 1] = v[1]! / len
        this.normals[3 * i + 2] = v[2]! / len
        state = NORMAL_OK
      }
    }
    this.state[i] = state
    return state
  }
}

/** The target of ICP runs against one held scan (x y z interleaved, metres). */
export function buildIcpTarget(points: Float64Array, options: IcpTargetOptions = {}): IcpTarget {
  const k = options.neighbours ?? DEFAULT_NEIGHBOURS
  if (!Number.isInteger(k) || k < 3) throw new RangeError(`neighbours must be a whole number of at least 3, got ${k}`)
  checkPoints(points, 'target')
  const target = new IcpTarget(points, k)
  if (options.eagerNormals) target.fitAllNormals()
  return target
}

/** Refines `options.start` so the moving scan lies on the target. */
export async function refineIcp(target: IcpTarget, moving: Float64Array, options: IcpOptions = {}): Promise<IcpResult> {
  const settings = readOptions(options)
  checkPoints(moving, 'moving')
  options.signal?.throwIfAborted()
  const sample = subsample(moving, settings.sampleCap, settings.seed)
  const run = new Pass(target, sample, settings.maxDistance, options.signal)
  const iterations: IcpIteration[] = []
  const record = (pass: PassResult) => {
    const entry = { rms: pass.rms, pointRms: pass.pointRms, overlap: pass.overlap, pairs: pass.pairs, fitted: pass.fitted }
    iterations.push(entry)
    options.onProgress?.({ iteration: iterations.length - 1, ...entry })
  }
  const finish = (matrix: number[], converged: boolean, reason: string): IcpResult => {
    const last = iterations[iterations.length - 1]!
    return { matrix, iterations, converged, reason, finalRms: last.rms, overlap: last.overlap, sampleCount: sample.length / 3, maxDistance: settings.maxDistance }
  }

  let matrix = [...settings.start]
  let current = await run.evaluate(matrix)
  record(current)
  if (current.fitted < MIN_PAIRS) {
    return finish(matrix, false, `only ${current.fitted} moving points have a partner with a surface normal within ${settings.maxDistance} m at the start (at least ${MIN_PAIRS} are needed): bring the scans closer first or raise the distance limit`)
  }
  for (let step = 1; step <= settings.maxIterations; step++) {
    const proposal = current.step
    if (!proposal) return finish(matrix, false, 'the pairs do not constrain any motion')
    const small = proposal.degrees < settings.rotationToleranceDegrees && proposal.metres < settings.translationTolerance
    const nearMinimum = proposal.degrees < STALL_FACTOR * settings.rotationToleranceDegrees && proposal.metres < STALL_FACTOR * settings.translationTolerance
    // Halving a step that is already at noise level buys nothing but passes: try it whole, once.
    const halvings = nearMinimum ? 0 : HALVINGS
    let accepted: PassResult | null = null
    let candidate = matrix
    for (let h = 0, scale = 1; h <= halvings && !accepted; h++, scale /= 2) {
      candidate = multiplyRigid(stepMatrix(proposal, scale), matrix)
      const next = await run.evaluate(candidate)
      if (next.fitted >= MIN_PAIRS && next.rms <= current.rms) accepted = next
    }
    if (!accepted) {
      return finish(matrix, nearMinimum, `no step lowers the RMS further (the proposed step: ${(proposal.metres * 1000).toPrecision(3)} mm, ${proposal.degrees.toPrecision(3)} degrees); the last accepted matrix is kept`)
    }
    const before = current.rms
    matrix = candidate
    current = accepted
    record(current)
    if (small) return finish(matrix, true, `the step fell below ${settings.rotationToleranceDegrees} degrees and ${settings.translationTolerance * 1000} mm`)
    if (before - current.rms <= settings.rmsTolerance * before) return finish(matrix, true, `the RMS changed by less than ${settings.rmsTolerance} of itself`)
  }
  return finish(matrix, false, `stopped at the iteration cap (${settings.maxIterations})`)
}

// ---------------------------------------------------------------------------------------------------------

interface Step {
  /** Rotation vector (radians) about `centre`, then translation (metres). */
  w: [number, number, number]
  tau: [number, number, number]
  centre: [number, number, number]
  degrees: number
  /** How far the step moves the centre. */
  metres: number
}

interface PassResult extends IcpIteration {
  /** The point-to-plane step from these pairs, or null when nothing constrains it. */
  step: Step | null
}

/**
 * Pairing and the normal equations in one sweep over the sample: scratch typed arrays only, no object per
 * point. The sums are of rows a = [(q - c) x n / L, n] and right-hand sides b = -(q - t) . n.
 */
class Pass {
  private readonly heap = new KBest(1)
  private readonly ata = new Float64Array(36)
  private readonly atb = new Float64Array(6)
  private readonly row = new Float64Array(6)
  private readonly sampleCentroid: [number, number, number]
  private readonly radius: number

  constructor(
    private readonly target: IcpTarget,
    private readonly sample: Float64Array,
    private readonly maxDistance: number,
    private readonly signal: AbortSignal | undefined,
  ) {
    const n = sample.length / 3
    let cx = 0, cy = 0, cz = 0
    for (let i = 0; i < sample.length; i += 3) {
      cx += sample[i]!
      cy += sample[i + 1]!
      cz += sample[i + 2]!
    }
    this.sampleCentroid = [cx / n, cy / n, cz / n]
    let r2 = 0
    for (let i = 0; i < sample.length; i += 3) {
      r2 += (sample[i]! - this.sampleCentroid[0]) ** 2 + (sample[i + 1]! - this.sampleCentroid[1]) ** 2 + (sample[i + 2]! - this.sampleCentroid[2]) ** 2
    }
    // Lever arm for scaling the rotation columns; 1 m for a sample that is a single spot.
    this.radius = Math.sqrt(r2 / n) || 1
  }

  async evaluate(m: Matrix4): Promise<PassResult> {
    const { sample, target, heap, ata, atb, row } = this
    const points = target.points
    const normals = target.normalArray
    const limit = this.maxDistance
    const invL = 1 / this.radius
    const [cx, cy, cz] = transformPoint(m, ...this.sampleCentroid)
    const m0 = m[0]!, m1 = m[1]!, m2 = m[2]!, m4 = m[4]!, m5 = m[5]!, m6 = m[6]!
    const m8 = m[8]!, m9 = m[9]!, m10 = m[10]!, m12 = m[12]!, m13 = m[13]!, m14 = m[14]!
    ata.fill(0)
    atb.fill(0)
    const n = sample.length / 3
    let pairs = 0, fitted = 0, pointSq = 0, planeSq = 0
    let since = performance.now()
    for (let start = 0; start < n; start += PASS_CHUNK) {
      // Once a pass, then by the clock rather than by a count: chunks that first fit normals cost far more.
      if (start === 0 || performance.now() - since >= YIELD_MS) {
        await yieldToLoop(this.signal)
        since = performance.now()
      }
      const end = Math.min(n, start + PASS_CHUNK)
      for (let i = start; i < end; i++) {
        const px = sample[3 * i]!, py = sample[3 * i + 1]!, pz = sample[3 * i + 2]!
        const qx = m0 * px + m4 * py + m8 * pz + m12
        const qy = m1 * px + m5 * py + m9 * pz + m13
        const qz = m2 * px + m6 * py + m10 * pz + m14
        heap.reset(limit)
        target.grid.nearest(qx, qy, qz, heap)
        if (heap.size === 0) continue
        pairs++
        pointSq += heap.dist2[0]!
        const j = heap.indices[0]!
        if (!target.hasNormal(j)) continue
        fitted++
        const nx = normals[3 * j]!, ny = normals[3 * j + 1]!, nz = normals[3 * j + 2]!
        const b = -((qx - points[3 * j]!) * nx + (qy - points[3 * j + 1]!) * ny + (qz - points[3 * j + 2]!) * nz)
        planeSq += b * b
        const rx = (qx - cx) * invL, ry = (qy - cy) * invL, rz = (qz - cz) * invL
        row[0] = ry * nz - rz * ny
        row[1] = rz * nx - rx * nz
        row[2] = rx * ny - ry * nx
        row[3] = nx
        row[4] = ny
        row[5] = nz
        for (let a = 0; a < 6; a++) {
          const ra = row[a]!
          atb[a]! += ra * b
          for (let c = a; c < 6; c++) ata[6 * a + c]! += ra * row[c]!
        }
      }
    }
    const step = fitted >= MIN_PAIRS ? this.solve([cx, cy, cz], invL) : null
    return {
      rms: fitted > 0 ? Math.sqrt(planeSq / fitted) : 0,
      pointRms: pairs > 0 ? Math.sqrt(pointSq / pairs) : 0,
      overlap: pairs / n,
      pairs,
      fitted,
      step,
    }
  }

  /** Least-squares step from the summed normal equations, dropping directions nothing constrains. */
  private solve(centre: [number, number, number], invL: number): Step | null {
    const ata = this.ata
    const a = new Matrix(6, 6)
    for (let r = 0; r < 6; r++) {
      for (let c = r; c < 6; c++) {
        a.set(r, c, ata[6 * r + c]!)
        a.set(c, r, ata[6 * r + c]!)
      }
    }
    const svd = new SingularValueDecomposition(a)
    const sigma = svd.diagonal
    const largest = sigma[0]!
    if (!(largest > 0)) return null
    const u = svd.leftSingularVectors, v = svd.rightSingularVectors
    const x = [0, 0, 0, 0, 0, 0]
    for (let k = 0; k < 6; k++) {
      if (!(sigma[k]! > largest * SINGULAR_RATIO)) continue
      let dot = 0
      for (let r = 0; r < 6; r++) dot += u.get(r, k) * this.atb[r]!
      const coefficient = dot / sigma[k]!
      for (let r = 0; r < 6; r++) x[r]! += coefficient * v.get(r, k)
    }
    const w: [number, number, number] = [x[0]! * invL, x[1]! * invL, x[2]! * invL]
    const tau: [number, number, number] = [x[3]!, x[4]!, x[5]!]
    return { w, tau, centre, degrees: (Math.hypot(...w) * 180) / Math.PI, metres: Math.hypot(...tau) }
  }
}

/** The step scaled by `scale`: q -> R(scale w) (q - c) + c + scale tau, column-major. */
function stepMatrix(step: Step, scale: number): number[] {
  const wx = step.w[0] * scale, wy = step.w[1] * scale, wz = step.w[2] * scale
  const angle = Math.hypot(wx, wy, wz)
  // Rodrigues: R = I + sin(a) K + (1 - cos(a)) K^2 for the unit axis k = w / a; identity for a = 0.
  let r = [1, 0, 0, 0, 1, 0, 0, 0, 1]
  if (angle > 0) {
    const kx = wx / angle, ky = wy / angle, kz = wz / angle
    const s = Math.sin(angle), c = 1 - Math.cos(angle)
    // Row-major.
    r = [
      1 + c * (kx * kx - 1), -s * kz + c * kx * ky, s * ky + c * kx * kz,
      s * kz + c * kx * ky, 1 + c * (ky * ky - 1), -s * kx + c * ky * kz,
      -s * ky + c * kx * kz, s * kx + c * ky * kz, 1 + c * (kz * kz - 1),
    ]
  }
  const [cx, cy, cz] = step.centre
  const t = [0, 1, 2].map((i) => (i === 0 ? cx : i === 1 ? cy : cz) + step.tau[i]! * scale - (r[3 * i]! * cx + r[3 * i + 1]! * cy + r[3 * i + 2]! * cz))
  return [r[0]!, r[3]!, r[6]!, 0, r[1]!, r[4]!, r[7]!, 0, r[2]!, r[5]!, r[8]!, 0, t[0]!, t[1]!, t[2]!, 1]
}

/** A seeded uniform random subsample (Floyd's algorithm, as the scan statistics sample), in scan order. */
function subsample(points: Float64Array, cap: number, seed: number): Float64Array {
  const count = points.length / 3
  if (count <= cap) return points
  const chosen = sampleIndices(count, cap, createRandom(seed))
  const out = new Float64Array(chosen.length * 3)
  for (let s = 0; s < chosen.length; s++) {
    const i = chosen[s]!
    out[3 * s] = points[3 * i]!
    out[3 * s + 1] = points[3 * i + 1]!
    out[3 * s + 2] = points[3 * i + 2]!
  }
  return out
}

function yieldToLoop(signal: AbortSignal | undefined): Promise<void> {
  return new Promise<void>((resolve) => setImmediate(resolve)).then(() => signal?.throwIfAborted())
}

function checkPoints(points: Float64Array, name: string): void {
  if (!(points instanceof Float64Array)) throw new TypeError(`${name} points must be a Float64Array of x y z`)
  if (points.length === 0 || points.length % 3 !== 0) throw new RangeError(`${name} points must be a non-empty run of x y z triples, got ${points.length} numbers`)
}

interface Settings {
  start: Matrix4
  maxDistance: number
  sampleCap: number
  seed: number
  maxIterations: number
  rotationToleranceDegrees: number
  translationTolerance: number
  rmsTolerance: number
}

function readOptions(o: IcpOptions): Settings {
  const s: Settings = {
    start: o.start ?? [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1],
    maxDistance: o.maxDistance ?? DEFAULT_MAX_DISTANCE,
    sampleCap: o.sampleCap ?? DEFAULT_SAMPLE_CAP,
    seed: o.seed ?? 1,
    maxIterations: o.maxIterations ?? DEFAULT_MAX_ITERATIONS,
    rotationToleranceDegrees: o.rotationToleranceDegrees ?? 2e-4,
    translationTolerance: o.translationTolerance ?? 2e-5,
    rmsTolerance: o.rmsTolerance ?? 1e-6,
  }
  const problem = rigidProblem(s.start)
  if (problem) throw new RangeError(`start matrix ${problem}`)
  const positive = { maxDistance: s.maxDistance, rotationToleranceDegrees: s.rotationToleranceDegrees, translationTolerance: s.translationTolerance }
  for (const [name, value] of Object.entries(positive)) if (!(Number.isFinite(value) && value > 0)) throw new RangeError(`${name} must be a positive number, got ${value}`)
  if (!(Number.isFinite(s.rmsTolerance) && s.rmsTolerance >= 0)) throw new RangeError(`rmsTolerance must be a number of at least 0, got ${s.rmsTolerance}`)
  if (!Number.isInteger(s.sampleCap) || s.sampleCap < MIN_PAIRS) throw new RangeError(`sampleCap must be a whole number of at least ${MIN_PAIRS}, got ${s.sampleCap}`)
  if (!Number.isInteger(s.maxIterations) || s.maxIterations < 0) throw new RangeError(`maxIterations must be a whole number of at least 0, got ${s.maxIterations}`)
  if (!Number.isInteger(s.seed)) throw new RangeError(`seed must be a whole number, got ${s.seed}`)
  return s
}
