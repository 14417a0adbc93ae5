import { invertRigid, transformPoint } from '@shared/geometry/rigidTransform'
import type { FreeOpening } from '@shared/measure/opening'
import { polygonArea } from '@shared/measure/polygon'
import { planeFrame, type SlabFrame } from '@shared/measure/slab'
import { combineInQuadrature, COVERAGE_FACTOR } from '@shared/measure/uncertainty'
import { SectionParams, type Check, type CheckPart, type SectionFigure, type Vec3 } from '@shared/schemas'
import { compute, sharedFloat64Array } from '../../compute/pool'
import { placementOf, ring, round, stillWanted, Stop, tooManyPoints, type CheckContext, type CheckInput, type Snapped } from '../checkParts'
import type { KindCheck } from './index'

/**
 * A section: the slab of stored points about its plane, written in the plane's frame, its outline, and its
 * free opening when asked (the clear width is then its value). The clearance kind goes through the same
 * computation (computeSection, openingOf, sectionFigure).
 */

/** Fewer slab points than this give too-few-points (common practice, no source: below it no outline is meaningful). */
export const SECTION_MIN_POINTS = 20
/** Figure sample size of a section's points. */
const SAMPLE_POINTS = 3000

export interface SectionComputation {
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

export async function computeSection(input: CheckInput, s: Snapped[], ctx: CheckContext): Promise<SectionComputation> {
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
    const local = await ctx.points.slab(placement.scanId, o, n, params.thickness / 2, cap - read, placement.keep)
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


const OPENING_METHOD =
  'Free opening: the points of the slab are grown by one point spacing and rasterised at half a spacing; the region reached from the seed by a flood fill is the opening. Clear width is taken at its narrowest row and clear height at its lowest column, both within the middle half; each edge there is a local least-squares fit of the points beside it (the surface they sample, not the innermost noisy point).'

export interface OpeningOutcome {
  opening: FreeOpening
  result: NonNullable<SectionFigure['opening']>
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


export async function openingOf(sec: SectionComputation, ctx: CheckContext): Promise<OpeningOutcome | { problem: string }> {
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

export async function sectionFigure(sec: SectionComputation, opening: OpeningOutcome | { problem: string } | null): Promise<SectionFigure> {
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
  const figure = await sectionFigure(sec, opening)
  const section = { kind: 'section' as const, ...figure }
  if (opening && 'problem' in opening) return { ...base, state: 'invalid-geometry', reason: `No free opening: ${opening.problem}`, result: section }
  if (section.opening) {
    const o = section.opening
    return {
      ...base,
      value: o.clearWidth,
      unit: 'm',
      standardUncertainty: o.uncertainty.width / COVERAGE_FACTOR,
      expandedUncertainty: o.uncertainty.width,
      parts: o.uncertainty.parts,
      result: section,
    }
  }
  return { ...base, value: section.area, unit: 'm2', standardUncertainty: null, expandedUncertainty: null, parts: [], result: section }
}

export const section: KindCheck = {
  check: async (base, snapped, input, ctx) => sectionCheck(base, await computeSection(input, snapped, ctx), ctx),
  references: (params, refs) => {
    const ids = (params as SectionParams).instanceIds ?? []
    ids.forEach((id, i) => {
      if (!refs.hasPlacement(id)) throw refs.invalid(`params.instanceIds.${i}`, 'no placement with this id in the scene.')
    })
  },
}
