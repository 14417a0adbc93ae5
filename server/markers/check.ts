import { ComputeTaskError } from '../compute/pool'
import { emptyCheck, offScanReason, snapAnchor, spansPlacements, Stop, type CheckContext, type CheckInput, type Snapped } from './checkParts'
import { kindCheck } from './kinds'
import type { Check } from '@shared/schemas'

/**
 * The authoritative check of one marker against the stored points. Pure in its inputs: the marker, the
 * scene's placements and scans, the project's settings and a point source. Every kind's anchors are snapped
 * here (their budgets, on or off the scan); the kind's own check (server/markers/kinds/) computes the value
 * from the snapped anchors.
 */

export type { CheckContext, CheckInput, CheckPlacement, CheckScan } from './checkParts'
export { toleranceFor } from './checkParts'

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
    return await kindCheck(input.kind).check(base, snapped, input, ctx)
  } catch (error) {
    if (error instanceof Stop) return emptyCheck(input.revision, error.state, error.message, snapped.map((s) => s.checked))
    // A computation that threw in its worker thread is a property of this marker's data, not a fault of the
    // server's: the check ends with the message (a new revision checks again); the pool carries on.
    if (error instanceof ComputeTaskError) return emptyCheck(input.revision, 'invalid-geometry', `The check could not be computed: ${error.message}.`, snapped.map((s) => s.checked))
    throw error
  }
}
