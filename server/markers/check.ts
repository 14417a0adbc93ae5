import type { CheckState } from '@shared/collab/states'
import { invertRigid, transformPoint } from '@shared/geometry/rigidTransform'
import { measureAngle } from '@shared/measure/angle'
import { decideFit, fitResolution } from '@shared/measure/clearance'
import { measureDistance } from '@shared/measure/distance'
import type { FreeOpening } from '@shared/measure/opening'
import { marginEdgeParts } from '@shared/measure/edges'
import { polygonArea } from '@shared/measure/polygon'
import { planeFrame, type SlabFrame } from '@shared/measure/slab'
import { anchorBudget, combineInQuadrature, COVERAGE_FACTOR, type UncertaintyPart } from '@shared/measure/uncertainty'
import {
  blankCheck,
  ClearanceParams,
  SectionParams,
  TOLERANCE_LIMITS,
  type Check,
  type CheckedAnchor,
  type CheckPart,
  type ClearanceResult,
  type MarkerKind,
  type SectionResult,
  type Vec3,
} from '@shared/schemas'
import { compute, ComputeTaskError, sharedFloat64Array } from '../compute/pool'
import type { StoredAnchor } from '../repositories/markers'
import type { ScanIndexes } from '../types'

/**
 * The authoritative check of one marker against the stored points (DESIGN sections 4 and 6; issue "markers
 * checked against the points"). Pure in its inputs: the marker, the scene's placements and scans, the
 * project's settings and a point source. The value is computed from the snapped anchors.
 */

export interface CheckPlacement {
  matrix: number[]
  scanId: string
  /**
   * Per-axis standard uncertainty of the placement's registration, metres: from the RMS of the accepted
   * registration that still holds for it (server/registration/current.ts, shared/measure/uncertainty.ts
   * registrationUncertainty); 0 for a placement that is not aligned (the reference, or moved by hand).
   */
  registrationU: number
}

export interface CheckScan {
  name: string
  status: string
  spacing: number | null
  /** One value per scan (entered, else estimated), metres; per-point values come from the tiles. */
  pointUncertainty: number | null
}

export interface CheckInput {
  kind: MarkerKind
  anchors: StoredAnchor[]
  params: Record<string, unknown>
  revision: number
}

export interface CheckContext {
  placements: ReadonlyMap<string, CheckPlacement>
  scans: ReadonlyMap<string, CheckScan>
  settings: { anchorTolerance: number | null; requiredMargin: number }
  points: Pick<ScanIndexes, 'snap' | 'slab' | 'allPoints'>
  /** Another marker of the scene (a clearance's section). */
  marker(id: string): Promise<CheckInput | undefined>
  /** Stops work early when a newer revision made this check moot (latest wins). */
  cancelled?: () => boolean
  /** Stored points one check may read (config.limits.checkPoints); over it the check ends with a reason. */
  maxPoints?: number
}

/** Fewer slab points than this give too-few-points (common practice, no source: below it no outline is meaningful). */
export const SECTION_MIN_POINTS = 20
/** Figure sample size of a section's points. */
const SAMPLE_POINTS = 3000
/** A direction of travel closer than this cosine to the opening's plane is refused. */
const GRAZING_COS = 0.1

export const CLEARANCE_ASSUMPTIONS = [
  'The object passes straight along the direction of travel, without turning on the way.',
  'The object may be turned in the opening plane only as far as the marker allows (any turn unless limited).',
  'The opening is thin: its free outline in this one section holds along the whole passage.',
  'The object is rigid and is its silhouette along the direction of travel (its convex hull), as scanned.',
  'Islands of points inside the opening smaller than the object are not looked for.',
]

/** What this clearance assumed, in words: the fixed list with its turning and carriage made specific. */
function clearanceAssumptions(params: ClearanceParams, carriage: 'floor' | 'trolley' | 'carried', lift: number | null): string[] {
  const o = params.orientation
  const turning = !o
    ? CLEARANCE_ASSUMPTIONS[1]!
    : o.mode === 'as-it-stands'
      ? 'The object goes through as it stands (no turn, no tip).'
      : o.mode === 'upright'
        ? 'The object stays upright and may be turned about the vertical (searched in 10-degree steps, refined to 0.5 degrees).'
        : o.mode === 'tipped'
          ? `The object may be tipped at most ${o.maxTipDegrees} degrees from upright and turned any way (searched in 10-degree steps, refined to 0.5 degrees).`
          : 'The object may be turned and tipped any way (searched in 10-degree steps, refined to 0.5 degrees).'
  const moving =
    carriage === 'floor'
      ? 'The object rests on the opening\'s floor and slides or rolls through: the margin is to the sides and the head, not to the floor.'
      : carriage === 'trolley'
        ? `The object rides on a trolley or skates ${formatMetres(lift ?? 0)} high, narrower than the object: the margin is to the sides and the head.`
        : 'The object is carried free in the opening (it may be lifted): the margin is to every side.'
  return [CLEARANCE_ASSUMPTIONS[0]!, turning, CLEARANCE_ASSUMPTIONS[2]!, CLEARANCE_ASSUMPTIONS[3]!, moving, CLEARANCE_ASSUMPTIONS[4]!]
}

const formatMetres = (m: number) => `${(Math.round(m * 1000) / 1000).toFixed(3)} m`

/** Section points (u v pairs) above a level: a resting object's floor is left out of its margin. */
function pointsAbove(uv: Float64Array, v: number): Float64Array {
  let n = 0
  for (let i = 1; i < uv.length; i += 2) if (uv[i]! >= v) n++
  const out = new Float64Array(2 * n)
  for (let i = 0, k = 0; i < uv.length; i += 2) if (uv[i + 1]! >= v) (out[k++] = uv[i]!), (out[k++] = uv[i + 1]!)
  return out
}

/**
 * The object's points placed in the scene and written in the section's frame: u, v and the distance along the
 * section's normal n (x y z triples, metres, in shared memory for the compute threads). Done once per check;
 * the silhouette and the orientation search both read it.
 */
async function inSectionFrame(local: Float64Array, m: readonly number[], frame: SectionComputation['frame']): Promise<Float64Array> {
  const count = local.length / 3
  const [ox, oy, oz] = frame.origin
  const { u, v, n } = frame
  const out = sharedFloat64Array(3 * count)
  for (let i = 0; i < count; i++) {
    // A turn for the event loop every 131 072 points (a million-point object takes about 80 ms here).
    if ((i & 0x1ffff) === 0x1ffff) await new Promise<void>((resolve) => setImmediate(resolve))
    const x = local[3 * i]!, y = local[3 * i + 1]!, z = local[3 * i + 2]!
    const px = m[0]! * x + m[4]! * y + m[8]! * z + m[12]! - ox
    const py = m[1]! * x + m[5]! * y + m[9]! * z + m[13]! - oy
    const pz = m[2]! * x + m[6]! * y + m[10]! * z + m[14]! - oz
    out[3 * i] = u[0] * px + u[1] * py + u[2] * pz
    out[3 * i + 1] = v[0] * px + v[1] * py + v[2] * pz
    out[3 * i + 2] = n[0] * px + n[1] * py + n[2] * pz
  }
  return out
}

/**
 * The best orientation within the limits (shared/measure/orientation.ts, in the compute pool), for travel
 * straight through (along +n or -n: `sign`): the section-frame points are the passage frame (w = sign * n),
 * with the scene's up (z); the support points are searched; then every point is turned by the best rotation
 * about the support centre and the silhouette is written in place (the fit that follows places it).
 */
async function orientObject(
  framed: Float64Array,
  sign: 1 | -1,
  frame: SectionComputation['frame'],
  opening: FreeOpening,
  limits: NonNullable<ClearanceParams['orientation']>,
  restOn: number | undefined,
  silhouette: Float64Array,
) {
  const count = framed.length / 3
  const xyz = sign === 1 ? framed : sharedFloat64Array(3 * count)
  if (sign === -1) for (let i = 0; i < 3 * count; i++) xyz[i] = i % 3 === 2 ? -framed[i]! : framed[i]!
  const support = await compute.supportPoints(xyz)
  if (!support) throw new Stop('invalid-geometry', 'the object has too few points to turn.')
  // The scene's up (z) in the passage frame.
  const up: [number, number, number] = [frame.u[2], frame.v[2], sign * frame.n[2]]
  const found = await compute.searchPassage(opening, support.points, up, { mode: limits.mode, ...(limits.maxTipDegrees !== undefined ? { maxTipDegrees: limits.maxTipDegrees } : {}) }, restOn)
  if (!found.ok) throw new Stop('invalid-geometry', `the object's orientations cannot be searched (${found.reason}).`)
  const r = found.best.matrix, [cx, cy, cz] = support.centre
  for (let i = 0; i < count; i++) {
    const x = xyz[3 * i]! - cx, y = xyz[3 * i + 1]! - cy, z = xyz[3 * i + 2]! - cz
    silhouette[2 * i] = r[0] * x + r[1] * y + r[2] * z + cx
    silhouette[2 * i + 1] = r[3] * x + r[4] * y + r[5] * z + cy
  }
  return {
    result: { words: found.words, turn: round(found.best.turn), tip: round(found.best.tip), spin: round(found.best.spin), matrix: found.best.matrix.map((x) => Math.round(x * 1e9) / 1e9), asItStands: found.asItStands },
  }
}

class Stop extends Error {
  constructor(
    readonly state: CheckState,
    message: string,
  ) {
    super(message)
  }
}

/** The reason of a check that would read more stored points than one check may. */
function tooManyPoints(what: string, cap: number, narrow: string): string {
  return `${what} holds more than ${cap.toLocaleString('en-GB')} stored points, the most one check reads: ${narrow}.`
}

interface Snapped {
  checked: CheckedAnchor
  /** Snapped (or picked, if no point) scene-frame position. */
  at: Vec3
  u: number
  parts: UncertaintyPart[]
}

export function toleranceFor(settings: CheckContext['settings'], spacing: number | null): number {
  if (settings.anchorTolerance !== null) return settings.anchorTolerance
  return Math.max(TOLERANCE_LIMITS.spacingFactor * (spacing ?? 0), TOLERANCE_LIMITS.floor)
}

function placementOf(ctx: CheckContext, instanceId: string, what: string): { placement: CheckPlacement; scan: CheckScan } {
  const placement = ctx.placements.get(instanceId)
  if (!placement) throw new Stop('invalid-geometry', `${what}: its placement is no longer in the scene.`)
  const scan = ctx.scans.get(placement.scanId)
  if (scan && (scan.status === 'queued' || scan.status === 'processing')) throw new Stop('pending', `${what}: its scan "${scan.name}" is still being processed.`)
  if (!scan || scan.status !== 'ready') throw new Stop('invalid-geometry', `${what}: its scan ${scan ? `"${scan.name}" failed to process` : 'was deleted'}.`)
  return { placement, scan }
}

/**
 * The registration part of an anchor's budget: two points of one placement share its registration error,
 * which largely cancels in what they measure; points of two placements add both registrations'
 * uncertainty (DOMAIN section 2). So an anchor's budget lists its placement's registration only when the
 * marker's anchors lie on more than one placement. (An angle over A, A, B then carries A's term on both A
 * anchors, a little more than the exact correlated sum, which would let A's cancel between them.)
 */
function spansPlacements(anchors: readonly StoredAnchor[]): boolean {
  return new Set(anchors.map((a) => a.instanceId)).size > 1
}

async function snapAnchor(ctx: CheckContext, anchor: StoredAnchor, index: number, withRegistration: boolean): Promise<Snapped> {
  const name = `anchor ${index + 1}`
  const { placement, scan } = placementOf(ctx, anchor.instanceId, name)
  const picked = transformPoint(placement.matrix, anchor.x, anchor.y, anchor.z)
  const tolerance = toleranceFor(ctx.settings, scan.spacing)
  const found = await ctx.points.snap(placement.scanId, anchor.x, anchor.y, anchor.z)
  if (!found) throw new Stop('invalid-geometry', `${name}: the scan has no stored points.`)
  const snapped = transformPoint(placement.matrix, found.x, found.y, found.z)
  const budget = anchorBudget({
    point: found.uncertainty ?? scan.pointUncertainty ?? 0,
    spacing: scan.spacing ?? 0,
    registrationRms: withRegistration ? placement.registrationU : undefined,
  })
  if (!budget.ok) throw new Stop('invalid-geometry', `${name}: its uncertainty budget is not defined (${budget.reason}).`)
  return {
    checked: {
      instanceId: anchor.instanceId,
      picked,
      snapped,
      residual: found.distance,
      tolerance,
      onScan: found.distance <= tolerance,
      u: budget.total,
      parts: budget.parts,
    },
    at: snapped,
    u: budget.total,
    parts: budget.parts,
  }
}

function emptyCheck(revision: number, state: CheckState, reason: string | null, anchors: CheckedAnchor[] = []): Check {
  return { ...blankCheck(state, revision, reason, new Date().toISOString()), anchors }
}

const letter = (i: number) => String.fromCharCode(65 + i)

function offScanReason(anchors: CheckedAnchor[]): string | null {
  const off = anchors
    .map((a, i) => ({ a, i }))
    .filter(({ a }) => !a.onScan)
    .map(({ a, i }) => `anchor ${letter(i)} is ${(a.residual! * 1000).toFixed(1)} mm from the nearest stored point (tolerance ${(a.tolerance * 1000).toFixed(1)} mm)`)
  return off.length ? `${off.join('; ')}.` : null
}

/** Runs the check; never throws for a degenerate marker (that is a state), only for I/O faults. */
export async function checkMarker(input: CheckInput, ctx: CheckContext): Promise<Check> {
  const snapped: Snapped[] = []
  try {
    const spans = spansPlacements(input.anchors)
    for (let i = 0; i < input.anchors.length; i++) snapped.push(await snapAnchor(ctx, input.anchors[i]!, i, spans))
    const anchors = snapped.map((s) => s.checked)
    const offReason = offScanReason(anchors)
    // An off-scan anchor still gets its value computed (from the snapped points), flagged by the state.
    const base = emptyCheck(input.revision, offReason ? 'off-scan' : 'checked', offReason, anchors)
    switch (input.kind) {
      case 'distance':
        return distanceCheck(base, snapped)
      case 'angle':
        return angleCheck(base, snapped)
      case 'section': {
        const section = await computeSection(input, snapped, ctx)
        return await sectionCheck(base, section, ctx)
      }
      case 'clearance':
        return await clearanceCheck(base, input, ctx)
    }
  } catch (error) {
    if (error instanceof Stop) return emptyCheck(input.revision, error.state, error.message, snapped.map((s) => s.checked))
    // A computation that threw in its worker thread is a property of this marker's data, not a fault of the
    // server's: the check ends with the message (a new revision checks again); the pool carries on.
    if (error instanceof ComputeTaskError) return emptyCheck(input.revision, 'invalid-geometry', `The check could not be computed: ${error.message}.`, snapped.map((s) => s.checked))
    throw error
  }
}

function partsOf(snapped: Snapped[], scale: (i: number) => number): CheckPart[] {
  return snapped.flatMap((s, i) => s.parts.map((p) => ({ name: `${letter(i)} ${p.name}`, u: p.u * scale(i) })))
}

function distanceCheck(base: Check, s: Snapped[]): Check {
  const d = measureDistance(s[0]!.at, s[1]!.at, s[0]!.u, s[1]!.u)
  if (!d.ok) {
    const why = d.reason === 'zero-length' ? 'the two anchors snap to the same point: a zero length.' : `the distance is not defined (${d.reason}).`
    return { ...base, state: 'invalid-geometry', reason: why }
  }
  return {
    ...base,
    value: d.distance,
    unit: 'm',
    standardUncertainty: d.u.distance,
    expandedUncertainty: COVERAGE_FACTOR * d.u.distance,
    parts: partsOf(s, () => 1),
    distance: { dx: d.dx, dy: d.dy, dz: d.dz, horizontal: d.horizontal, vertical: d.vertical, uHorizontal: d.u.horizontal, uVertical: d.u.vertical },
  }
}

function angleCheck(base: Check, s: Snapped[]): Check {
  const g = measureAngle(s[0]!.at, s[1]!.at, s[2]!.at, s[0]!.u, s[1]!.u, s[2]!.u)
  if (!g.ok) {
    const why = g.reason === 'coincident' ? 'an arm has zero length: the vertex snaps to the same point as an arm.' : `the angle is not defined (${g.reason}).`
    return { ...base, state: 'invalid-geometry', reason: why }
  }
  const deg = 180 / Math.PI
  // Sensitivities (DOMAIN section 2, angle.ts): arm ends 1/a and 1/c, the vertex b/(a c), radians per metre.
  const scale = (i: number) => deg * (i === 0 ? 1 / g.a : i === 2 ? 1 / g.c : g.b / (g.a * g.c))
  return {
    ...base,
    value: g.degrees,
    unit: 'deg',
    standardUncertainty: g.u.degrees,
    expandedUncertainty: COVERAGE_FACTOR * g.u.degrees,
    parts: partsOf(s, scale),
    angle: { nearBound: g.nearBound },
    reason: base.reason ?? (g.nearBound ? 'The angle is near 0 or 180 degrees, where the first-order uncertainty is only approximate.' : null),
  }
}

interface SectionComputation {
  frame: SlabFrame
  thickness: number
  xyz: Float64Array
  uv: Float64Array
  spacing: number
  pointUncertainty: number
  registrationRms: number
  seedUv: [number, number] | null
  wantOpening: boolean
}

function sub(a: Vec3, b: Vec3): Vec3 {
  return [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

/** The slab's plane in the scene frame, from the anchors or the numbers. */
function sectionPlane(params: SectionParams, s: Snapped[]): { origin: Vec3; normal: Vec3 } {
  if (params.plane === 'numbers') return { origin: params.origin!, normal: params.normal! }
  if (params.plane === 'two-points') {
    const [a, b] = [s[0]!.at, s[1]!.at]
    const d = sub(b, a)
    const h = Math.hypot(d[0], d[1])
    if (h < 1e-6) throw new Stop('invalid-geometry', 'the two points are one above the other: no vertical plane is defined through them.')
    return { origin: [(a[0] + b[0]) / 2, (a[1] + b[1]) / 2, (a[2] + b[2]) / 2], normal: [-d[1] / h, d[0] / h, 0] }
  }
  const [a, b, c] = [s[0]!.at, s[1]!.at, s[2]!.at]
  const ab = sub(b, a), ac = sub(c, a)
  const n: Vec3 = [ab[1] * ac[2] - ab[2] * ac[1], ab[2] * ac[0] - ab[0] * ac[2], ab[0] * ac[1] - ab[1] * ac[0]]
  const len = Math.hypot(...n)
  // Collinear within the anchors' own tolerance: the third point's distance from the line through the
  // first two (or the longer pair) is what fixes the plane's turn about that line.
  const base = Math.max(Math.hypot(...ab), Math.hypot(...ac), 1e-12)
  const offLine = len / base
  const tolerance = Math.max(...s.map((x) => x.checked.tolerance))
  if (!(offLine > tolerance)) {
    throw new Stop('invalid-geometry', `the three points are collinear: the third lies ${(offLine * 1000).toFixed(1)} mm from the line through the others (at most the tolerance ${(tolerance * 1000).toFixed(1)} mm), so no plane is defined.`)
  }
  return { origin: [(a[0] + b[0] + c[0]) / 3, (a[1] + b[1] + c[1]) / 3, (a[2] + b[2] + c[2]) / 3], normal: [n[0] / len, n[1] / len, n[2] / len] }
}

async function computeSection(input: CheckInput, s: Snapped[], ctx: CheckContext): Promise<SectionComputation> {
  const parsed = SectionParams.safeParse(input.params)
  if (!parsed.success) throw new Stop('invalid-geometry', `the section's params are not valid: ${parsed.error.issues[0]?.message}`)
  const params = parsed.data
  const { origin, normal } = sectionPlane(params, s)
  const frame = planeFrame(origin, normal)
  if (!frame) throw new Stop('invalid-geometry', 'the plane normal is zero.')
  const ids = params.instanceIds ?? [...new Set(input.anchors.map((a) => a.instanceId))]
  const chunks: Float64Array[] = []
  let spacing = 0, pointU = 0, rms = 0
  const cap = ctx.maxPoints ?? Infinity
  let read = 0
  for (const id of ids) {
    const { placement, scan } = placementOf(ctx, id, 'a placement the section cuts')
    const inv = invertRigid(placement.matrix)
    const o = transformPoint(inv, origin[0], origin[1], origin[2])
    const r = inv
    const n = [r[0]! * frame.n[0] + r[4]! * frame.n[1] + r[8]! * frame.n[2], r[1]! * frame.n[0] + r[5]! * frame.n[1] + r[9]! * frame.n[2], r[2]! * frame.n[0] + r[6]! * frame.n[1] + r[10]! * frame.n[2]]
    const local = await ctx.points.slab(placement.scanId, o, n, params.thickness / 2, cap - read)
    if (ctx.cancelled?.()) throw new Stop('pending', 'superseded by a newer change')
    read += local.length / 3
    if (read > cap) throw new Stop('invalid-geometry', tooManyPoints('the slab', cap, ids.length > 1 ? 'make the slab thinner, or let the section cut fewer placements' : 'make the slab thinner, or place the section across a smaller part of the scan'))
    const m = placement.matrix
    for (let i = 0; i < local.length; i += 3) {
      const [x, y, z] = transformPoint(m, local[i]!, local[i + 1]!, local[i + 2]!)
      local[i] = x
      local[i + 1] = y
      local[i + 2] = z
    }
    chunks.push(local)
    spacing = Math.max(spacing, scan.spacing ?? 0)
    pointU = Math.max(pointU, scan.pointUncertainty ?? 0)
    rms = Math.max(rms, placement.registrationU)
  }
  // A section through one placement: both edges of an opening share its registration, which cancels.
  if (ids.length < 2) rms = 0
  const total = chunks.reduce((n, c) => n + c.length, 0)
  const xyz = new Float64Array(total)
  let at = 0
  for (const c of chunks) xyz.set(c, at), (at += c.length)
  const count = total / 3
  if (count === 0) throw new Stop('invalid-geometry', `the slab (${(params.thickness * 1000).toFixed(0)} mm thick) holds no stored points: it cuts nothing.`)
  if (count < SECTION_MIN_POINTS) throw new Stop('too-few-points', `the slab holds only ${count} stored points (at least ${SECTION_MIN_POINTS} are needed).`)
  if (!(spacing > 0)) throw new Stop('invalid-geometry', 'the scans cut have no known point spacing.')
  const uv = sharedFloat64Array(2 * count)
  const [ox, oy, oz] = frame.origin
  for (let i = 0; i < count; i++) {
    const dx = xyz[3 * i]! - ox, dy = xyz[3 * i + 1]! - oy, dz = xyz[3 * i + 2]! - oz
    uv[2 * i] = frame.u[0] * dx + frame.u[1] * dy + frame.u[2] * dz
    uv[2 * i + 1] = frame.v[0] * dx + frame.v[1] * dy + frame.v[2] * dz
  }
  let seedUv: [number, number] | null = null
  const seed = params.seed ?? (s.length ? s.reduce<Vec3>((c, a) => [c[0] + a.at[0] / s.length, c[1] + a.at[1] / s.length, c[2] + a.at[2] / s.length], [0, 0, 0]) : origin)
  const d = sub(seed, frame.origin)
  seedUv = [frame.u[0] * d[0] + frame.u[1] * d[1] + frame.u[2] * d[2], frame.v[0] * d[0] + frame.v[1] * d[1] + frame.v[2] * d[2]]
  return { frame, thickness: params.thickness, xyz, uv, spacing, pointUncertainty: pointU, registrationRms: rms, seedUv, wantOpening: params.opening }
}

/** One point per cell of side `cell`: for outlines of dense slabs. */
function thinUv(uv: Float64Array, cell: number): Float64Array {
  const seen = new Set<number>()
  const out: number[] = []
  for (let i = 0; i < uv.length; i += 2) {
    const key = Math.floor(uv[i]! / cell) * 1_000_003 + Math.floor(uv[i + 1]! / cell)
    if (seen.has(key)) continue
    seen.add(key)
    out.push(uv[i]!, uv[i + 1]!)
  }
  return Float64Array.from(out)
}

function sampleUv(uv: Float64Array, max: number): number[] {
  const n = uv.length >> 1
  const stride = Math.max(1, Math.ceil(n / max))
  const out: number[] = []
  for (let i = 0; i < n; i += stride) out.push(round(uv[2 * i]!), round(uv[2 * i + 1]!))
  return out
}

const round = (x: number) => Math.round(x * 1e5) / 1e5
const ring = (xy: ArrayLike<number>) => Array.from(xy, round)

const OPENING_METHOD =
  'Free opening: the points of the slab are grown by one point spacing and rasterised at half a spacing; the region reached from the seed by a flood fill is the opening. Clear width is taken at its narrowest row and clear height at its lowest column, both within the middle half; each edge there is a local least-squares fit of the points beside it (the surface they sample, not the innermost noisy point).'

interface OpeningOutcome {
  opening: FreeOpening
  result: NonNullable<SectionResult['opening']>
  /** The opening's lower edge (section v, metres: fitted, or the grid's), and whether it is a floor. */
  bottom: number
  floor: boolean
}

/**
 * Is the opening's lower edge a floor (the object can rest on it and roll through) rather than a sill? A sill
 * has wall below it: section points more than 0.1 m under the edge within the opening's width; a floor has
 * none (nothing is scanned below a floor's surface). Common practice, no source; 1 % of the points allowed
 * for strays.
 */
function isFloor(uv: Float64Array, o: FreeOpening, bottom: number, spacing: number): boolean {
  const below = bottom - Math.max(0.1, 5 * spacing)
  let under = 0, total = 0
  for (let i = 0; i < uv.length; i += 2) {
    const u = uv[i]!, v = uv[i + 1]!
    if (u < o.extents.uMin || u > o.extents.uMax) continue
    total++
    if (v < below) under++
  }
  return under <= Math.max(2, 0.01 * total)
}

/** Stops a check whose marker moved on while a computation ran (latest wins). */
function stillWanted(ctx: CheckContext): void {
  if (ctx.cancelled?.()) throw new Stop('pending', 'superseded by a newer change')
}

async function openingOf(sec: SectionComputation, ctx: CheckContext): Promise<OpeningOutcome | { problem: string }> {
  if (!sec.seedUv) return { problem: 'no seed point for the opening.' }
  const found = await compute.freeOpening(sec.uv, sec.seedUv, sec.spacing)
  stillWanted(ctx)
  if (!found.ok) {
    const words: Record<string, string> = {
      'seed-on-points': 'the seed point lies on the points, not in an empty space: pick the two points on either side of the opening.',
      'not-enclosed': 'the empty space around the seed is not closed by points on every side (a gap in the scan, or no opening there).',
      'grid-too-large': 'the section is too large for the opening search at this point spacing; use a thinner slab or fewer placements.',
      'too-few-points': 'too few points for an opening.',
    }
    return { problem: words[found.reason] ?? `the opening could not be found (${found.reason}).` }
  }
  // Each edge is fitted to the points beside it (shared/measure/edges.ts): the fits' parts, registration
  // per edge.
  // An edge that cannot be fitted (another surface in its band) leaves both figures at the grid's
  // extreme-point values, with the grid's resolution as a rectangular half-width (GUM 4.3.7).
  const fittedEdges = await compute.fittedOpening(found, sec.pointUncertainty)
  stillWanted(ctx)
  const edges = fittedEdges.ok
    ? fittedEdges
    : { clearWidth: found.clearWidthCorrected, clearHeight: found.clearHeightCorrected, uWidth: Math.hypot(Math.SQRT2 * sec.pointUncertainty, found.resolution / Math.sqrt(3)), uHeight: Math.hypot(Math.SQRT2 * sec.pointUncertainty, found.resolution / Math.sqrt(3)) }
  const edgeName = fittedEdges.ok ? 'edge fits' : 'edge points and grid resolution'
  const widthParts: CheckPart[] = [
    { name: edgeName, u: edges.uWidth },
    { name: 'registration', u: Math.SQRT2 * sec.registrationRms },
  ]
  const heightParts: CheckPart[] = [
    { name: edgeName, u: edges.uHeight },
    { name: 'registration', u: Math.SQRT2 * sec.registrationRms },
  ]
  const uw = combineInQuadrature(widthParts), uh = combineInQuadrature(heightParts)
  const parts = widthParts
  const bottom = fittedEdges.ok ? fittedEdges.edges.bottom : found.extents.vMin - found.radius
  return {
    opening: found,
    bottom,
    floor: isFloor(sec.uv, found, bottom, sec.spacing),
    result: {
      seed: [round(sec.seedUv[0]), round(sec.seedUv[1])],
      outline: ring(found.outline),
      area: found.area,
      clearWidth: edges.clearWidth,
      clearWidthAtV: found.clearWidthAtV,
      clearHeight: edges.clearHeight,
      clearHeightAtU: found.clearHeightAtU,
      uncertainty: { width: uw.ok ? uw.expanded : NaN, height: uh.ok ? uh.expanded : NaN, parts },
      resolution: found.resolution,
      method: OPENING_METHOD,
    },
  }
}

async function sectionResult(sec: SectionComputation, opening: OpeningOutcome | { problem: string } | null): Promise<SectionResult> {
  const thin = thinUv(sec.uv, sec.spacing)
  const outline = await compute.concaveOutline(thin, sec.spacing)
  let uMin = Infinity, uMax = -Infinity, vMin = Infinity, vMax = -Infinity
  for (let i = 0; i < sec.uv.length; i += 2) {
    const u = sec.uv[i]!, v = sec.uv[i + 1]!
    if (u < uMin) uMin = u
    if (u > uMax) uMax = u
    if (v < vMin) vMin = v
    if (v > vMax) vMax = v
  }
  return {
    frame: { origin: sec.frame.origin, u: sec.frame.u, v: sec.frame.v, n: sec.frame.n },
    thickness: sec.thickness,
    pointCount: sec.uv.length / 2,
    extents: { uMin, uMax, vMin, vMax },
    sample: sampleUv(sec.uv, SAMPLE_POINTS),
    outline: outline.ok ? ring(outline.xy) : [],
    area: outline.ok ? polygonArea(outline.xy) : 0,
    spacing: sec.spacing,
    opening: opening && 'result' in opening ? opening.result : null,
    openingProblem: opening && 'problem' in opening ? opening.problem : null,
  }
}

async function sectionCheck(base: Check, sec: SectionComputation, ctx: CheckContext): Promise<Check> {
  const opening = sec.wantOpening ? await openingOf(sec, ctx) : null
  const section = await sectionResult(sec, opening)
  if (opening && 'problem' in opening) return { ...base, state: 'invalid-geometry', reason: `No free opening: ${opening.problem}`, section }
  if (section.opening) {
    const o = section.opening
    return {
      ...base,
      value: o.clearWidth,
      unit: 'm',
      standardUncertainty: o.uncertainty.width / COVERAGE_FACTOR,
      expandedUncertainty: o.uncertainty.width,
      parts: o.uncertainty.parts,
      section,
    }
  }
  return { ...base, value: section.area, unit: 'm2', standardUncertainty: null, expandedUncertainty: null, parts: [], section }
}

async function clearanceCheck(base: Check, input: CheckInput, ctx: CheckContext): Promise<Check> {
  const parsed = ClearanceParams.safeParse(input.params)
  if (!parsed.success) throw new Stop('invalid-geometry', `the clearance's params are not valid: ${parsed.error.issues[0]?.message}`)
  const params = parsed.data
  const sectionMarker = await ctx.marker(params.sectionMarkerId)
  if (!sectionMarker || sectionMarker.kind !== 'section') throw new Stop('invalid-geometry', 'the section of this clearance was deleted.')
  const { placement: object, scan: objectScan } = placementOf(ctx, params.objectInstanceId, 'the object')
  const sectionAnchors: Snapped[] = []
  const sectionSpans = spansPlacements(sectionMarker.anchors)
  for (let i = 0; i < sectionMarker.anchors.length; i++) sectionAnchors.push(await snapAnchor(ctx, sectionMarker.anchors[i]!, i, sectionSpans))
  const sec = await computeSection(sectionMarker, sectionAnchors, ctx)
  const opening = await openingOf(sec, ctx)
  if ('problem' in opening) throw new Stop('invalid-geometry', `the section has no free opening: ${opening.problem}`)
  const n = sec.frame.n
  let dir = params.direction ?? n
  const len = Math.hypot(...dir)
  dir = [dir[0] / len, dir[1] / len, dir[2] / len]
  const cos = dir[0] * n[0] + dir[1] * n[1] + dir[2] * n[2]
  if (Math.abs(cos) < GRAZING_COS) throw new Stop('invalid-geometry', 'the direction of travel runs (almost) along the opening instead of through it.')

  const cap = ctx.maxPoints ?? Infinity
  const local = await ctx.points.allPoints(object.scanId, cap)
  if (ctx.cancelled?.()) throw new Stop('pending', 'superseded by a newer change')
  if (local.length / 3 > cap) throw new Stop('invalid-geometry', tooManyPoints("the object's scan", cap, 'upload the object as a scan of its own, cropped to the object (or thinned), and place that instead'))
  const count = local.length / 3
  if (count < 3) throw new Stop('invalid-geometry', 'the object has no stored points.')
  const framed = await inSectionFrame(local, object.matrix, sec.frame)
  const silhouette = sharedFloat64Array(2 * count)
  const requiredMargin = params.requiredMargin ?? ctx.settings.requiredMargin
  // How it moves: resting on the floor (default when the lower edge is one), on a trolley, or carried.
  const carriageMode = params.carriage?.mode ?? (opening.floor ? 'floor' : 'carried')
  if (carriageMode !== 'carried' && !opening.floor) throw new Stop('invalid-geometry', "the opening's lower edge is a sill, not a floor (there is wall below it): the object cannot rest on it. Choose carried, or a section through a door.")
  const restOn = carriageMode === 'floor' ? opening.bottom : carriageMode === 'trolley' ? opening.bottom + (params.carriage as { height: number }).height : null
  // Turning and tipping by the object's own up (shared/measure/orientation.ts), travel straight through.
  let turned: Awaited<ReturnType<typeof orientObject>> | null = null
  if (params.orientation && params.orientation.mode !== 'as-it-stands') {
    if (Math.abs(cos) < 0.999) throw new Stop('invalid-geometry', 'turning and tipping are searched for travel straight through the opening: leave the direction of travel unset, or keep the object as it stands.')
    turned = await orientObject(framed, cos > 0 ? 1 : -1, sec.frame, opening.opening, params.orientation, restOn ?? undefined, silhouette)
    stillWanted(ctx)
  } else {
    // As scanned: each point slides along the direction of travel onto the section plane (n . q = 0), then
    // to u v: q = p - t dir with t = (n . p) / (n . dir).
    const ud = sec.frame.u[0] * dir[0] + sec.frame.u[1] * dir[1] + sec.frame.u[2] * dir[2]
    const vd = sec.frame.v[0] * dir[0] + sec.frame.v[1] * dir[1] + sec.frame.v[2] * dir[2]
    for (let i = 0; i < count; i++) {
      const t = framed[3 * i + 2]! / cos
      silhouette[2 * i] = framed[3 * i]! - t * ud
      silhouette[2 * i + 1] = framed[3 * i + 1]! - t * vd
    }
  }
  // The object's outline fitted to its points (shared/measure/edges.ts), placed by the fit, and the margin
  // measured to the opening's fitted surfaces.
  const outline = await compute.fittedOutline(silhouette, objectScan.pointUncertainty ?? 0, objectScan.spacing ?? sec.spacing)
  stillWanted(ctx)
  if (!outline.ok) throw new Stop('invalid-geometry', `the object's silhouette cannot be fitted (${outline.reason}).`)
  const fitOptions = {
    ...(turned ? { maxTurnDegrees: 0 } : params.maxTurnDegrees === undefined ? {} : { maxTurnDegrees: params.maxTurnDegrees }),
    ...(restOn === null ? {} : { restOn }),
  }
  const fit = await compute.fitThrough(opening.opening, outline.xy, requiredMargin, 0, fitOptions)
  if (!fit.ok) throw new Stop('invalid-geometry', fit.reason === 'rest-level-outside' ? 'the object resting at that height does not reach into the opening (the trolley is higher than the opening).' : `the object's silhouette cannot be fitted (${fit.reason}).`)
  stillWanted(ctx)
  // Resting: the floor under it is no gap to measure (its points are left out) and it only slides across.
  const marginOpening = restOn === null ? opening.opening : { ...opening.opening, points: pointsAbove(opening.opening.points, restOn + 2 * sec.spacing) }
  const fitted = fit.margin > 0 ? await compute.fittedMargin(marginOpening, fit.placed, sec.pointUncertainty, 24, { keepHeight: restOn !== null }) : null
  // Margin uncertainty: the edge fits on both sides, both registrations; an overlap (negative margin) is
  // measured on the grid, with the grid's resolution as a rectangular half-width (GUM 4.3.7).
  const parts: CheckPart[] = [
    ...(fitted?.ok ? marginEdgeParts(fitted, outline) : [{ name: 'grid resolution', u: fitResolution(opening.opening) / Math.sqrt(3) }]),
    { name: 'registration (opening)', u: sec.registrationRms },
    { name: 'registration (object)', u: object.registrationU },
  ]
  const budget = combineInQuadrature(parts)
  if (!budget.ok) throw new Stop('invalid-geometry', `the margin's uncertainty is not defined (${budget.reason}).`)
  const margin = fitted?.ok ? fitted.margin : fit.margin
  const collides = margin + budget.expanded < 0
  const sectionPart = await sectionResult(sec, opening)
  const clearance: ClearanceResult = {
    outcome: decideFit(margin, budget.expanded, requiredMargin),
    collides,
    margin,
    requiredMargin,
    rotationDegrees: fit.rotationDegrees,
    translation: [round(fit.translation[0]), round(fit.translation[1])],
    nearest: {
      silhouettePoint: [round(fit.nearest.silhouettePoint[0]), round(fit.nearest.silhouettePoint[1])],
      boundaryPoint: [round(fit.nearest.boundaryPoint[0]), round(fit.nearest.boundaryPoint[1])],
    },
    direction: dir,
    frame: sectionPart.frame,
    openingOutline: opening.result.outline,
    silhouette: ring(fit.placed),
    objectPointCount: count,
    resolution: fit.resolution,
    assumptions: clearanceAssumptions(params, carriageMode, restOn === null ? null : restOn - opening.bottom),
    carriage: { mode: carriageMode, restOn: restOn === null ? null : round(restOn), floorFound: opening.floor },
    orientation: turned && params.orientation ? { mode: params.orientation.mode, ...turned.result } : null,
  }
  return {
    ...base,
    value: margin,
    unit: 'm',
    standardUncertainty: budget.total,
    expandedUncertainty: budget.expanded,
    parts: budget.parts,
    section: sectionPart,
    clearance,
    reason: collides ? 'The object collides with the opening: even the margin plus its uncertainty is below zero.' : null,
  }
}
