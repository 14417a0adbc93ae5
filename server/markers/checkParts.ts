import type { CheckState } from '@shared/collab/states'
import { transformPoint } from '@shared/geometry/rigidTransform'
import { anchorBudget, type UncertaintyPart } from '@shared/measure/uncertainty'
import { blankCheck, TOLERANCE_LIMITS, type Check, type CheckedAnchor, type CheckPart, type MarkerKind, type Vec3 } from '@shared/schemas'
import type { StoredAnchor } from '../repositories/markers'
import type { PointFilter, ScanIndexes } from '../types'

/**
 * What every kind's check shares: its inputs and context, snapping anchors to the stored points with their
 * uncertainty budgets, and the stop of a check with a state and a reason.
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
  /** The placement's scene cuts (scan frame): the points they cut are never snapped to or read. */
  keep?: PointFilter
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
  /**
   * An object's points as its trims, its members' scene cuts and its stray filter keep them (scene frame), with
   * what each member adds to a budget; `around` (metres) also returns the points its trims took away within
   * that distance of the kept points' bounding box (the floor it stands on). Throws `Stop` for an object that
   * is gone, a member still processing, or more points than one check reads. `{ instanceId }`: a placement read
   * as a one-member object with no trims of its own (an older clearance's object).
   */
  objectPoints(target: string | { instanceId: string }, options?: { around?: number }): Promise<ObjectPointsRead>
  /** Stops work early when a newer revision made this check moot (latest wins). */
  cancelled?: () => boolean
  /** Stored points one check may read (config.limits.checkPoints); over it the check ends with a reason. */
  maxPoints?: number
}

export interface ObjectPointsRead {
  name: string
  /** Kept points, scene frame, x y z triples (in shared memory for the compute threads). */
  points: Float64Array
  /** With `around`: the points its trims took away near it, scene frame (else empty). */
  around: Float64Array
  members: { instanceId: string; scanName: string; registrationU: number; stored: number; kept: number }[]
  /** The largest per-scan point uncertainty and spacing of its members (metres). */
  pointUncertainty: number
  spacing: number
  strayDropped: number
}

export class Stop extends Error {
  constructor(
    readonly state: CheckState,
    message: string,
  ) {
    super(message)
  }
}

/** The reason of a check that would read more stored points than one check may. */
export function tooManyPoints(what: string, cap: number, narrow: string): string {
  return `${what} holds more than ${cap.toLocaleString('en-GB')} stored points, the most one check reads: ${narrow}.`
}

export interface Snapped {
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

export function placementOf(ctx: CheckContext, instanceId: string, what: string): { placement: CheckPlacement; scan: CheckScan } {
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
 * uncertainty (shared/measure/README.md, "Registration terms"). So an anchor's budget lists its placement's registration only when the
 * marker's anchors lie on more than one placement. (An angle over A, A, B then carries A's term on both A
 * anchors, a little more than the exact correlated sum, which would let A's cancel between them.)
 */
export function spansPlacements(anchors: readonly StoredAnchor[]): boolean {
  return new Set(anchors.map((a) => a.instanceId)).size > 1
}

export async function snapAnchor(ctx: CheckContext, anchor: StoredAnchor, index: number, withRegistration: boolean): Promise<Snapped> {
  const name = `anchor ${index + 1}`
  const { placement, scan } = placementOf(ctx, anchor.instanceId, name)
  const picked = transformPoint(placement.matrix, anchor.x, anchor.y, anchor.z)
  const tolerance = toleranceFor(ctx.settings, scan.spacing)
  const found = await ctx.points.snap(placement.scanId, anchor.x, anchor.y, anchor.z, placement.keep)
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

export function emptyCheck(revision: number, state: CheckState, reason: string | null, anchors: CheckedAnchor[] = []): Check {
  return { ...blankCheck(state, revision, reason, new Date().toISOString()), anchors }
}

export const letter = (i: number) => String.fromCharCode(65 + i)

export function offScanReason(anchors: CheckedAnchor[]): string | null {
  const off = anchors
    .map((a, i) => ({ a, i }))
    .filter(({ a }) => !a.onScan)
    .map(({ a, i }) => `anchor ${letter(i)} is ${(a.residual! * 1000).toFixed(1)} mm from the nearest stored point (tolerance ${(a.tolerance * 1000).toFixed(1)} mm)`)
  return off.length ? `${off.join('; ')}.` : null
}

export function partsOf(snapped: Snapped[], scale: (i: number) => number): CheckPart[] {
  return snapped.flatMap((s, i) => s.parts.map((p) => ({ name: `${letter(i)} ${p.name}`, u: p.u * scale(i) })))
}

/** Stops a check whose marker moved on while a computation ran (latest wins). */
export function stillWanted(ctx: CheckContext): void {
  if (ctx.cancelled?.()) throw new Stop('pending', 'superseded by a newer change')
}

export const round = (x: number) => Math.round(x * 1e5) / 1e5
export const ring = (xy: ArrayLike<number>) => Array.from(xy, round)
