// Placing markers by clicks (app/components/viewer/markerPlacing.ts): the click state machine, the request
// bodies (parsed with the contract's own zod schema), plane problems, and the live preview against worked
// values: the 3-4-5 right triangle (Euclid I.47) for a length and atan(4/3) = 53.130102354...° (standard
// trigonometric value, from memory, recomputed below with Math.atan2), GUM eq. 10 (JCGM 100:2008 section
// 5.1) for the uncertainty of a difference of two independent points, and Spanmark's written form
// "0.912\u00a0m ± 4.0\u00a0mm (k = 2)".
import { describe, expect, it } from 'vitest'
import { MarkerCreateBody } from '@shared/schemas'
import type { LengthUnit } from '@shared/format/units'
import { addPick, type Picked } from '@/components/viewer/markerPlacing'
import { MARKER_TOOLS, TOOL_KEYS, isMarkerTool } from '@/components/viewer/viewerTools'
import { kindOfTool, kindUi } from '@/kinds'
import { clearanceBody } from '@/kinds/clearance/placing'
import { sectionBody, sectionNumbersBody, sectionProblem, type SectionClicks } from '@/kinds/section/placing'
import type { Vec3 } from '@/viewer/types'

// Each kind's placing, read through the client's kind registry (app/kinds) as the page reads it.
const tool = (id: string) => kindOfTool(id)!
const anchorsNeeded = (id: string, plane: SectionClicks = 'two-points') => tool(id).clicks({ plane })
const placingHint = (id: string, count: number, plane: SectionClicks = 'two-points') => tool(id).hint(count, { plane })
const previewText = (id: string, points: readonly Vec3[], u: readonly number[], unit: LengthUnit) => tool(id).preview?.(points, u, unit) ?? null
const distanceBody = (picks: readonly Picked[]) => kindUi('distance').bodyOf!(picks, {})
const angleBody = (picks: readonly Picked[]) => kindUi('angle').bodyOf!(picks, {})
import { WALK_KEYS } from '@/viewer/WalkControls'

const A = '11111111-1111-4111-8111-111111111111'
const B = '22222222-2222-4222-8222-222222222222'
const p = (x: number, y: number, z: number, instanceId = A): Picked => ({ instanceId, point: [x, y, z] })

describe('tool keys', () => {
  it('gives every tool its own letter, none of them a walking key', () => {
    const letters = Object.values(TOOL_KEYS)
    expect(new Set(letters).size).toBe(letters.length)
    const walking = WALK_KEYS.flatMap((k) => k.keys).filter((k) => /^[A-Z]$/.test(k))
    for (const letter of letters) expect(walking).not.toContain(letter)
    expect(MARKER_TOOLS.every(isMarkerTool)).toBe(true)
    expect(isMarkerTool('pick')).toBe(false)
    expect(isMarkerTool('section')).toBe(false)
  })
})

describe('the click state machine', () => {
  it('takes two points for a distance, three for an angle or a three-point section, none for a clearance', () => {
    expect(anchorsNeeded('distance')).toBe(2)
    expect(anchorsNeeded('angle')).toBe(3)
    expect(anchorsNeeded('section-marker', 'two-points')).toBe(2)
    expect(anchorsNeeded('section-marker', 'three-points')).toBe(3)
    expect(anchorsNeeded('clearance')).toBe(0)
  })

  it('appends clicks until the marker is complete, then starts over with the next click', () => {
    let picks: Picked[] = []
    picks = addPick(picks, p(0, 0, 0), 2)
    picks = addPick(picks, p(1, 0, 0), 2)
    expect(picks.map((x) => x.point[0])).toEqual([0, 1])
    picks = addPick(picks, p(5, 0, 0), 2)
    expect(picks.map((x) => x.point[0])).toEqual([5])
  })

  it('says what to click next at every step', () => {
    expect(placingHint('distance', 0)).toMatch(/first end/)
    expect(placingHint('distance', 1)).toMatch(/other end/)
    expect(placingHint('angle', 0)).toMatch(/first arm/)
    expect(placingHint('angle', 1)).toMatch(/vertex/)
    expect(placingHint('angle', 2)).toMatch(/second arm/)
    expect(placingHint('section-marker', 1, 'two-points')).toMatch(/upright plane/)
    expect(placingHint('section-marker', 2, 'two-points')).toMatch(/thickness/)
    expect(placingHint('section-marker', 1, 'three-points')).toMatch(/second of three/)
    expect(placingHint('section-marker', 2, 'three-points')).toMatch(/third point/)
    expect(placingHint('section-marker', 3, 'three-points')).toMatch(/create the section/)
  })
})

describe('request bodies', () => {
  it('are what the contract accepts, anchors in the scene frame as picked', () => {
    const d = MarkerCreateBody.parse(distanceBody([p(0, 0, 1), p(3, 4, 1, B)]))
    expect(d).toMatchObject({ kind: 'distance', anchors: [{ instanceId: A, x: 0, y: 0, z: 1 }, { instanceId: B, x: 3, y: 4, z: 1 }] })
    expect(MarkerCreateBody.parse(angleBody([p(1, 0, 0), p(0, 0, 0), p(0, 1, 0)])).kind).toBe('angle')
    const s = MarkerCreateBody.parse(sectionBody([p(-1, 0, 1), p(1, 0, 1)], { plane: 'two-points', thickness: 0.05, opening: true }))
    expect(s).toMatchObject({ kind: 'section', params: { plane: 'two-points', thickness: 0.05, opening: true } })
    const s3 = MarkerCreateBody.parse(sectionBody([p(0, 0, 0), p(1, 0, 0), p(0, 0, 1)], { plane: 'three-points', thickness: 0.02, opening: false }))
    expect(s3.anchors).toHaveLength(3)
  })

  it('send the required margin of a clearance only when one is given', () => {
    const plain = MarkerCreateBody.parse(clearanceBody({ objectId: A, sectionMarkerId: B }))
    expect(plain).toMatchObject({ kind: 'clearance', anchors: [], params: { objectId: A, sectionMarkerId: B } })
    expect('requiredMargin' in plain.params).toBe(false)
    const margin = MarkerCreateBody.parse(clearanceBody({ objectId: A, sectionMarkerId: B, requiredMargin: 0.05 }))
    expect(margin.params).toMatchObject({ requiredMargin: 0.05 })
  })
})

describe('section planes', () => {
  it('refuses two points at the same place seen from above (a plumb line has no upright plane of its own)', () => {
    expect(sectionProblem([p(1, 2, 0), p(1, 2, 2)], 'two-points')).toMatch(/same place/)
    expect(sectionProblem([p(1, 2, 0), p(1.5, 2, 2)], 'two-points')).toBeNull()
  })

  it('refuses three points in a line and takes three off it', () => {
    expect(sectionProblem([p(0, 0, 0), p(1, 1, 1), p(2, 2, 2)], 'three-points')).toMatch(/in a line/)
    expect(sectionProblem([p(0, 0, 0), p(1, 0, 0), p(2, 0.0001, 0)], 'three-points')).toMatch(/in a line/)
    expect(sectionProblem([p(0, 0, 0), p(1, 0, 0), p(0.5, 0, 1)], 'three-points')).toBeNull()
  })
})

describe('the live preview', () => {
  it('reads a 3-4-5 distance with U = 2·sqrt(uA² + uB²)', () => {
    // uA = 1.5 mm, uB = 2 mm: u = 2.5 mm, U = 5.0 mm.
    expect(previewText('distance', [[0, 0, 0], [3, 4, 0]], [0.0015, 0.002], 'm')).toBe('5.000\u00a0m \u00b1 5.0\u00a0mm (k = 2)')
    expect(previewText('distance', [[0, 0, 0], [0.3, 0.4, 0]], [0.0015, 0.002], 'mm')).toBe('500.0\u00a0mm \u00b1 5.0\u00a0mm (k = 2)')
  })

  it('reads the 3-4-5 angle, atan(4/3) = 53.13°, at the vertex', () => {
    const text = previewText('angle', [[3, 0, 0], [0, 0, 0], [3, 4, 0]], [0, 0, 0], 'm')
    expect((Math.atan2(4, 3) * 180) / Math.PI).toBeCloseTo(53.130102354, 8)
    expect(text).toBe('53.13\u00b0 \u00b1 0.00\u00b0 (k = 2)')
  })

  it('gives nothing for too few points or coincident ones', () => {
    expect(previewText('distance', [[1, 1, 1]], [0], 'm')).toBeNull()
    expect(previewText('distance', [[1, 1, 1], [1, 1, 1]], [0, 0], 'm')).toBeNull()
    expect(previewText('angle', [[1, 0, 0], [0, 0, 0]], [0, 0], 'm')).toBeNull()
    expect(previewText('section-marker', [[1, 0, 0], [0, 0, 0]], [0, 0], 'm')).toBeNull()
  })
})

describe('a section by numbers', () => {
  it('is a valid marker body by the contract: a point, a normal, the placements it cuts, no anchors', () => {
    const body = sectionNumbersBody({ origin: [0, 0.15, 1], normal: [0, 1, 0], instanceIds: ['10000000-0000-4000-8000-000000000001'] }, { thickness: 0.1, opening: true })
    expect(MarkerCreateBody.parse(body)).toMatchObject({ kind: 'section', anchors: [], params: { plane: 'numbers', origin: [0, 0.15, 1], normal: [0, 1, 0], thickness: 0.1, opening: true } })
  })
})
