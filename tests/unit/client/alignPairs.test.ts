// The align tool's tie pairs on the page (app/components/viewer/alignPairs.ts) and the registration report's
// words (app/components/registration/registrationText.ts): the click order, the fit request (parsed with the
// contract's own zod schema), error wording by row, and the matrix as read. References: the 90-degree turn
// about Z and the move (1, 2, 3) (a worked example, derived), and three.js's Matrix4 for the column-major
// layout of a rotation (reference library).
import { describe, expect, it } from 'vitest'
import { Matrix4 } from 'three'
import { RegistrationFitBody, type PlacementRegistration } from '@shared/schemas'
import { rotationZ } from '@shared/geometry/rigidTransform'
import {
  alignErrorText,
  fitBody,
  nextSlot,
  pairsProblem,
  pairsSignature,
  placePick,
  tieViews,
  type TiePairDraft,
} from '@/components/viewer/alignPairs'
import { isMarkerTool, TOOL_KEYS } from '@/components/viewer/viewerTools'
import { matrixRows, placementStatus, transformText } from '@/components/registration/registrationText'

const M = '11111111-1111-4111-8111-111111111111'
const H = '22222222-2222-4222-8222-222222222222'
const side = (instanceId: string, x: number): { instanceId: string; scanPoint: [number, number, number] } => ({ instanceId, scanPoint: [x, 0, 0] })

function clicks(n: number): TiePairDraft[] {
  let pairs: TiePairDraft[] = []
  for (let i = 0; i < n; i++) {
    pairs = placePick(pairs, nextSlot(pairs, null), side(M, i), i + 1)
    pairs = placePick(pairs, nextSlot(pairs, null), side(H, i), i + 1)
  }
  return pairs
}

describe('tie pairs by clicks', () => {
  it('fills the moving side first, then the held side, then opens a new pair; a re-pick goes where asked', () => {
    expect(nextSlot([], null)).toEqual({ index: 0, side: 'moving' })
    const one = placePick([], nextSlot([], null), side(M, 1), 1)
    expect(nextSlot(one, null)).toEqual({ index: 0, side: 'held' })
    const two = placePick(one, nextSlot(one, null), side(H, 1), 1)
    expect(nextSlot(two, null)).toEqual({ index: 1, side: 'moving' })
    expect(nextSlot(two, { index: 0, side: 'moving' })).toEqual({ index: 0, side: 'moving' })
    const again = placePick(two, { index: 0, side: 'moving' }, side(M, 9), 2)
    expect(again).toHaveLength(1)
    expect(again[0]!.moving!.scanPoint[0]).toBe(9)
    expect(again[0]!.held!.scanPoint[0]).toBe(1)
    expect(TOOL_KEYS.align).toBe('T')
    expect(isMarkerTool('align')).toBe(false)
  })

  it('counts only complete, used, non-check pairs towards the three a fit needs', () => {
    const pairs = clicks(4)
    expect(pairsProblem(pairs)).toBeNull()
    const held = pairs.map((p, i) => ({ ...p, checkPoint: i === 0, enabled: i !== 1 }))
    expect(pairsProblem(held)).toMatch(/^2 of 3 tie pairs/)
  })

  it('sends scene-frame points made with the server\'s matrices, in a body the contract accepts', () => {
    const pairs = clicks(3)
    const matrices: Record<string, number[]> = { [M]: rotationZ(90, 1, 2, 3), [H]: new Matrix4().elements }
    const { body, keys } = fitBody(pairs, M, H, (id) => matrices[id], 'sphere', 0.0725)
    expect(keys).toEqual([1, 2, 3])
    // Worked example (derived): (x, 0, 0) turned 90 degrees about Z and moved (1, 2, 3) lands on (1, 2 + x, 3).
    expect(body.pairs[2]!.moving).toEqual({ x: expect.closeTo(1, 12), y: expect.closeTo(4, 12), z: 3 })
    expect(body.pairs[2]!.held).toEqual({ x: 2, y: 0, z: 0 })
    expect(RegistrationFitBody.safeParse(body).success).toBe(true)
  })

  it('names the row and the placement of a pair the server refused', () => {
    const pairs = clicks(3).filter((p) => p.key !== 1)
    const text = alignErrorText('body.pairs.1.held: 45.0 mm from the nearest stored point of "A".', 'pairs.1.held', [2, 3], pairs, { moving: 'B', held: 'A' })
    expect(text).toBe('Tie pair 2 on “A”: 45.0 mm from the nearest stored point of "A".')
    expect(alignErrorText('body.heldInstanceId: the held placement must be another placement.', 'heldInstanceId', [], pairs, { moving: 'B', held: 'A' })).toBe('The held placement must be another placement.')
  })

  it('changes its signature when a pair is re-picked or held out, and draws each pair with its label', () => {
    const pairs = clicks(3)
    const sig = pairsSignature(pairs, 'point', 0.05)
    expect(pairsSignature(pairs.map((p, i) => ({ ...p, checkPoint: i === 2 })), 'point', 0.05)).not.toBe(sig)
    expect(pairsSignature(pairs, 'sphere', 0.05)).not.toBe(sig)
    const views = tieViews(pairs.map((p, i) => ({ ...p, checkPoint: i === 2 })), () => new Matrix4().elements, new Map([[1, 0.0012]]), 'm')
    expect(views.map((v) => v.label!.title)).toEqual(['tie 1', 'tie 2', 'check 3'])
    expect(views[0]!.label!.value).toBe('1.2\u00a0mm')
    expect(views[0]!.strokes[0]!.points).toHaveLength(2)
  })
})

describe('registration report words', () => {
  it('reads a rotation matrix by rows as three.js lays it out, and as angles', () => {
    const m = new Matrix4().makeRotationZ(Math.PI / 2).setPosition(1, 2, 3).elements
    const rows = matrixRows(m, 'm')
    expect(rows[0]).toEqual(['0.000000', '-1.000000', '0.000000', '1.000\u00a0m'])
    expect(rows[1]).toEqual(['1.000000', '0.000000', '0.000000', '2.000\u00a0m'])
    expect(rows[3]).toEqual(['0.000000', '0.000000', '0.000000', '1.000000'])
    const words = transformText(m, 'm')!
    expect(words.translation).toBe('x 1.000\u00a0m, y 2.000\u00a0m, z 3.000\u00a0m')
    expect(words.rotation).toMatch(/then Z 90\.0000°/)
  })

  it('says which placement is the reference and which moved since its registration', () => {
    const p: PlacementRegistration = { instanceId: H, name: 'A', matrix: new Matrix4().elements, registrationId: null, movedSince: false, rms: null, rmsSource: null, registrationU: null }
    expect(placementStatus(p, undefined, ['B'])).toBe('the reference: “B” is aligned onto it')
    expect(placementStatus({ ...p, movedSince: true }, undefined)).toMatch(/moved since/)
    expect(placementStatus(p, undefined)).toMatch(/^not aligned/)
  })
})
