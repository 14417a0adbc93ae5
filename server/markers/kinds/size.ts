import { SizeParams, type SizeResult } from '@shared/kinds/size'
import type { SizeMember } from '@shared/measure/sizes'
import type { Check } from '@shared/schemas'
import { compute } from '../../compute/pool'
import { stillWanted, Stop, type CheckContext, type CheckInput } from '../checkParts'
import type { KindCheck } from './index'

/**
 * The sizes of an object: its kept points (trims, scene cuts and stray filter applied) and the points its trims
 * took away within AROUND of them (the floor it stands on), measured in the compute pool
 * (shared/measure/sizes.ts). The marker's value is the length; the width and height are in its result.
 */

/** How far round the object's kept points the floor is looked for, metres. */
export const AROUND = 0.3

export const SIZE_ASSUMPTIONS = [
  'The object stands upright as scanned: its height is along the vertical, its length and width are level.',
  'Its footprint is turned as the smallest rectangle round its points seen from above, then as its fitted sides say.',
  'Each face is the surface its points sample (a fit of the points beside it), not its outermost point; a part sticking out of a face (a handle) counts only where it fills the face\'s band.',
]

function assumptions(r: { floor: { found: boolean }; curved: readonly string[] }): string[] {
  return [
    ...SIZE_ASSUMPTIONS,
    r.floor.found
      ? `The bottom is the floor it stands on: a plane fitted to the points its trims took away within ${AROUND} m of it, under its centre.`
      : 'No floor was found under it: the bottom is its own lowest face (or lowest kept point).',
    ...(r.curved.some((c) => c !== 'top') ? ['A bending side (a drum) is measured across the outermost part of its fitted curve: a diameter.'] : []),
  ]
}

async function sizeCheck(base: Check, input: CheckInput, ctx: CheckContext): Promise<Check> {
  const parsed = SizeParams.safeParse(input.params)
  if (!parsed.success) throw new Stop('invalid-geometry', `the size marker's params are not valid: ${parsed.error.issues[0]?.message}`)
  const read = await ctx.objectPoints(parsed.data.objectId, { around: AROUND })
  stillWanted(ctx)
  const count = read.points.length / 3
  // Points told apart by member when the members' kept counts add up to the points read (they are concatenated in
  // the members' order); otherwise every face carries the largest member's registration.
  const attributed = read.members.reduce((k, m) => k + m.kept, 0) === count
  const members: SizeMember[] = read.members.map((m) => ({ name: m.scanName, registrationU: m.registrationU, ...(attributed ? { count: m.kept } : {}) }))
  const r = await compute.measureSizes(read.points, read.around, { sigma: read.pointUncertainty, spacing: read.spacing, members })
  stillWanted(ctx)
  if (!r.ok) throw new Stop(r.reason === 'too-few-points' ? 'too-few-points' : 'invalid-geometry', `the object "${read.name}" cannot be measured: ${r.detail}`)
  const result: SizeResult = {
    kind: 'size',
    objectName: read.name,
    length: r.length,
    width: r.width,
    height: r.height,
    box: r.box,
    floor: r.floor,
    footprint: r.footprint,
    side: r.side,
    objectPointCount: r.objectPointCount,
    curved: r.curved as SizeResult['curved'],
    assumptions: assumptions(r),
  }
  return {
    ...base,
    value: r.length.value,
    unit: 'm',
    standardUncertainty: r.length.u,
    expandedUncertainty: r.length.U,
    parts: r.length.parts,
    reason: base.reason ?? (r.notes.length ? r.notes.join(' ') : null),
    result,
  }
}

export const size: KindCheck = {
  check: (base, _snapped, input, ctx) => sizeCheck(base, input, ctx),
  references: async (raw, refs) => {
    const params = raw as SizeParams
    if (!(await refs.hasObject(params.objectId))) throw refs.invalid('params.objectId', 'no object with this id in the scene.')
  },
}
