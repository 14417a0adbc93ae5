import { decideFit, fitResolution } from '@shared/measure/clearance'
import { marginEdgeParts } from '@shared/measure/edges'
import type { FreeOpening } from '@shared/measure/opening'
import { combineInQuadrature } from '@shared/measure/uncertainty'
import { ClearanceParams, type Check, type CheckPart, type ClearanceResult } from '@shared/schemas'
import { compute, sharedFloat64Array } from '../../compute/pool'
import { placementOf, ring, round, snapAnchor, spansPlacements, stillWanted, Stop, tooManyPoints, type CheckContext, type CheckInput, type Snapped } from '../checkParts'
import type { KindCheck } from './index'
import { computeSection, openingOf, sectionFigure, type SectionComputation } from './section'

/**
 * A clearance: the object's points written in the frame of its section's free opening, turned and tipped
 * within its limits, fitted through, and the smallest margin measured to the opening's fitted surfaces.
 */

/** A direction of travel closer than this cosine to the opening's plane is refused. */
const GRAZING_COS = 0.1
const IDENTITY = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]

export const CLEARANCE_ASSUMPTIONS = [
  'The object passes straight along the direction of travel, without turning on the way.',
  'The object may be turned in the opening plane only as far as the marker allows (any turn unless limited).',
  'The opening is thin: its free outline in this one section holds along the whole passage.',
  'The object is rigid and is its silhouette along the direction of travel (its convex hull), as scanned.',
  'Islands of points inside the opening smaller than the object are not looked for.',
]

/** What this clearance assumed, in words: the fixed list with its turning and carriage made specific. */
function clearanceAssumptions(params: ClearanceParams, carriage: 'floor' | 'trolley' | 'carried', lift: number | null, sections = 1): string[] {
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
  const thin =
    sections > 1
      ? `The passage is the overlap of the free openings of ${sections} sections, seen along the direction of travel: straight, the object not turning on the way; what lies between the sections is not looked at.`
      : CLEARANCE_ASSUMPTIONS[2]!
  return [CLEARANCE_ASSUMPTIONS[0]!, turning, thin, CLEARANCE_ASSUMPTIONS[3]!, moving, CLEARANCE_ASSUMPTIONS[4]!]
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

/** A section marker's slab, its anchors snapped as the section's own check snaps them. */
async function sectionOfMarker(marker: CheckInput, ctx: CheckContext): Promise<SectionComputation> {
  const snapped: Snapped[] = []
  const spans = spansPlacements(marker.anchors)
  for (let i = 0; i < marker.anchors.length; i++) snapped.push(await snapAnchor(ctx, marker.anchors[i]!, i, spans))
  return computeSection(marker, snapped, ctx)
}

/** The free region around the first section's seed (no edge fits: the outline only), for the passage's figure. */
async function openingOutline(uv: Float64Array, seed: [number, number], spacing: number, ctx: CheckContext, problem: string): Promise<number[]> {
  const found = await compute.freeOpening(uv, seed, spacing)
  stillWanted(ctx)
  if (!found.ok) throw new Stop('invalid-geometry', problem)
  return ring(found.outline)
}

/**
 * A section's stored points seen along the direction of travel in another section's frame (u v pairs): each
 * point slides along `dir` onto that plane, q = p - t dir with t = n . (p - o) / (n . dir).
 */
function alongTravel(xyz: Float64Array, frame: SectionComputation['frame'], dir: readonly number[], cos: number): Float64Array {
  const count = xyz.length / 3
  const out = sharedFloat64Array(2 * count)
  const [ox, oy, oz] = frame.origin
  const { u, v, n } = frame
  const ud = u[0] * dir[0]! + u[1] * dir[1]! + u[2] * dir[2]!
  const vd = v[0] * dir[0]! + v[1] * dir[1]! + v[2] * dir[2]!
  for (let i = 0; i < count; i++) {
    const px = xyz[3 * i]! - ox, py = xyz[3 * i + 1]! - oy, pz = xyz[3 * i + 2]! - oz
    const t = (n[0] * px + n[1] * py + n[2] * pz) / cos
    out[2 * i] = u[0] * px + u[1] * py + u[2] * pz - t * ud
    out[2 * i + 1] = v[0] * px + v[1] * py + v[2] * pz - t * vd
  }
  return out
}

/**
 * The passage through the first section and the further ones: one section computation whose points are all of
 * theirs seen along the travel in the first's frame (the free opening of that union is the overlap of their
 * openings), and each section's own opening outline in that frame, for the figure. The spacing, point
 * uncertainty and registration taken are the largest of them.
 */
async function passageOf(first: SectionComputation, further: readonly string[], dir: readonly number[], cos: number, ctx: CheckContext): Promise<{ sec: SectionComputation; passage: number[][] }> {
  // Each section's own free region, for the figure: the first's as it is, the others' seen along the travel.
  const seed = first.seedUv!
  const passage = [await openingOutline(first.uv, seed, first.spacing, ctx, 'the first section of the passage has no free opening around its seed.')]
  const parts = [first.uv]
  let spacing = first.spacing, pointUncertainty = first.pointUncertainty, registrationRms = first.registrationRms
  for (const id of further) {
    const marker = await ctx.marker(id)
    if (!marker || marker.kind !== 'section') throw new Stop('invalid-geometry', 'a section of this passage was deleted.')
    const s = await sectionOfMarker(marker, ctx)
    const seen = alongTravel(s.xyz, first.frame, dir, cos)
    passage.push(await openingOutline(seen, seed, s.spacing, ctx, 'a further section of the passage has no free opening in line with the first one (seen along the direction of travel).'))
    parts.push(seen)
    spacing = Math.max(spacing, s.spacing)
    pointUncertainty = Math.max(pointUncertainty, s.pointUncertainty)
    // Sections on different placements do not share their registration: the largest is kept (conservative).
    registrationRms = Math.max(registrationRms, s.registrationRms)
  }
  const uv = sharedFloat64Array(parts.reduce((k, p) => k + p.length, 0))
  let at = 0
  for (const p of parts) uv.set(p, at), (at += p.length)
  return { sec: { ...first, uv, spacing, pointUncertainty, registrationRms }, passage }
}

async function clearanceCheck(base: Check, input: CheckInput, ctx: CheckContext): Promise<Check> {
  const parsed = ClearanceParams.safeParse(input.params)
  if (!parsed.success) throw new Stop('invalid-geometry', `the clearance's params are not valid: ${parsed.error.issues[0]?.message}`)
  const params = parsed.data
  const sectionMarker = await ctx.marker(params.sectionMarkerId)
  if (!sectionMarker || sectionMarker.kind !== 'section') throw new Stop('invalid-geometry', 'the section of this clearance was deleted.')
  const first = await sectionOfMarker(sectionMarker, ctx)
  const n = first.frame.n
  let dir = params.direction ?? n
  const len = Math.hypot(...dir)
  dir = [dir[0] / len, dir[1] / len, dir[2] / len]
  const cos = dir[0] * n[0] + dir[1] * n[1] + dir[2] * n[2]
  if (Math.abs(cos) < GRAZING_COS) throw new Stop('invalid-geometry', 'the direction of travel runs (almost) along the opening instead of through it.')
  // A passage of several sections: all their points seen along the travel in the first one's frame, so the
  // free opening found is the overlap of theirs.
  const { sec, passage } = params.alsoThrough ? await passageOf(first, params.alsoThrough, dir, cos, ctx) : { sec: first, passage: [] }
  const opening = await openingOf(sec, ctx)
  if ('problem' in opening) throw new Stop('invalid-geometry', `the ${passage.length ? 'passage' : 'section'} has no free opening: ${opening.problem}`)

  // The object: its members' kept points (trims, scene cuts, stray points), scene frame.
  const object = await ctx.objectPoints(params.objectId ?? { instanceId: params.objectInstanceId! })
  stillWanted(ctx)
  const count = object.points.length / 3
  if (count < 3) throw new Stop('invalid-geometry', `the object “${object.name}” keeps no points (${object.members.map((m) => `${m.scanName}: ${m.kept} of ${m.stored}`).join('; ')}): check its trims.`)
  const framed = await inSectionFrame(object.points, IDENTITY, sec.frame)
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
  const outline = await compute.fittedOutline(silhouette, object.pointUncertainty, object.spacing || sec.spacing)
  stillWanted(ctx)
  if (!outline.ok) throw new Stop('invalid-geometry', `the object's silhouette cannot be fitted (${outline.reason}).`)
  const fitOptions = {
    // Turned by the search, or kept as it stands: no further turn in the opening plane.
    ...(turned || params.orientation?.mode === 'as-it-stands' ? { maxTurnDegrees: 0 } : params.maxTurnDegrees === undefined ? {} : { maxTurnDegrees: params.maxTurnDegrees }),
    // Resting: the floor's own scatter (4 sigma of its points) is floor, not an obstacle.
    ...(restOn === null ? {} : { restOn, floorBand: 4 * sec.pointUncertainty }),
  }
  const fit = await compute.fitThrough(opening.opening, outline.xy, requiredMargin, 0, fitOptions)
  if (!fit.ok) throw new Stop('invalid-geometry', fit.reason === 'rest-level-outside' ? 'the object resting at that height does not reach into the opening (the trolley is higher than the opening).' : `the object's silhouette cannot be fitted (${fit.reason}).`)
  stillWanted(ctx)
  // Resting: the floor under it is no gap to measure (its points are left out) and it only slides across.
  const marginOpening = restOn === null ? opening.opening : { ...opening.opening, points: pointsAbove(opening.opening.points, restOn + 2 * sec.spacing + 4 * sec.pointUncertainty) }
  const fitted = fit.margin > 0 ? await compute.fittedMargin(marginOpening, fit.placed, sec.pointUncertainty, 24, { keepHeight: restOn !== null }) : null
  // Margin uncertainty: the edge fits on both sides, both registrations; an overlap (negative margin) is
  // measured on the grid, with the grid's resolution as a rectangular half-width (GUM 4.3.7).
  const parts: CheckPart[] = [
    ...(fitted?.ok ? marginEdgeParts(fitted, outline) : [{ name: 'grid resolution', u: fitResolution(opening.opening) / Math.sqrt(3) }]),
    { name: 'registration (opening)', u: sec.registrationRms },
    // Each member's registration (members on one reference share none; the largest would be a floor, the
    // sum in quadrature over members is kept: conservative when they share a reference).
    ...object.members.filter((m) => object.members.length === 1 || m.registrationU > 0).map((m) => ({ name: object.members.length > 1 ? `registration (object: ${m.scanName})` : 'registration (object)', u: m.registrationU })),
  ]
  const budget = combineInQuadrature(parts)
  if (!budget.ok) throw new Stop('invalid-geometry', `the margin's uncertainty is not defined (${budget.reason}).`)
  const margin = fitted?.ok ? fitted.margin : fit.margin
  const collides = margin + budget.expanded < 0
  const sectionPart = await sectionFigure(sec, opening)
  const clearance: ClearanceResult = {
    kind: 'clearance',
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
    assumptions: clearanceAssumptions(params, carriageMode, restOn === null ? null : restOn - opening.bottom, Math.max(1, passage.length)),
    carriage: { mode: carriageMode, restOn: restOn === null ? null : round(restOn), floorFound: opening.floor },
    orientation: turned && params.orientation ? { mode: params.orientation.mode, ...turned.result } : null,
    section: sectionPart,
    passage,
  }
  return {
    ...base,
    value: margin,
    unit: 'm',
    standardUncertainty: budget.total,
    expandedUncertainty: budget.expanded,
    parts: budget.parts,
    result: clearance,
    reason: collides ? 'The object collides with the opening: even the margin plus its uncertainty is below zero.' : null,
  }
}

export const clearance: KindCheck = {
  check: (base, _snapped, input, ctx) => clearanceCheck(base, input, ctx),
  references: async (raw, refs) => {
    const params = raw as ClearanceParams
    if (params.objectInstanceId !== undefined && !refs.hasPlacement(params.objectInstanceId)) throw refs.invalid('params.objectInstanceId', 'no placement with this id in the scene.')
    if (params.objectId !== undefined && !(await refs.hasObject(params.objectId))) throw refs.invalid('params.objectId', 'no object with this id in the scene.')
    const section = await refs.findMarker(params.sectionMarkerId)
    if (!section || section.scene_id !== refs.sceneId || section.id === refs.markerId) throw refs.invalid('params.sectionMarkerId', 'no section marker with this id in the scene.')
    if (section.kind !== 'section') throw refs.invalid('params.sectionMarkerId', `that marker is a ${section.kind}, not a section.`)
    if (!(section.params as { opening?: boolean }).opening) throw refs.invalid('params.sectionMarkerId', 'that section does not look for a free opening; turn "find the free opening" on first.')
    for (const [i, id] of (params.alsoThrough ?? []).entries()) {
      const further = await refs.findMarker(id)
      const field = `params.alsoThrough.${i}`
      if (!further || further.scene_id !== refs.sceneId || further.id === refs.markerId) throw refs.invalid(field, 'no section marker with this id in the scene.')
      if (further.kind !== 'section') throw refs.invalid(field, `that marker is a ${further.kind}, not a section.`)
    }
  },
}
