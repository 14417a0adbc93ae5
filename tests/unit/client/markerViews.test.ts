// What the viewport draws for markers (app/components/viewer/markerViews.ts), checked against three.js, a
// general-purpose reference library: Vector3.angleTo for the angle's arc, Plane.distanceToPoint for the
// section rectangle lying in its plane, and ShapeUtils.area for its size. Label words and colours come
// from the markers contract and Spanmark's own words ("0.912\u00a0m ± 4.0\u00a0mm (k = 2)", "off the points", kind colours);
// label stacking (viewer/markerLayer.ts liftClear) against lifts worked by hand.
import { describe, expect, it } from 'vitest'
import { Plane, ShapeUtils, Vector2, Vector3 } from 'three'
import type { Check, Marker, SectionFrame } from '@shared/schemas'
import { check, marker as baseMarker } from './factories'
import { BRICK, MARKER_KIND_COLOURS, anchorDots, arcPoints, markerLabel, markerView, planePoint, previewView, ringInPlane, sectionRectangle } from '@/components/viewer/markerViews'
import { leaderLine, liftClear, placeClear } from '@/viewer/markerLayer'
import type { Vec3 } from '@/viewer/types'

const INSTANCE = '11111111-1111-4111-8111-111111111111'
const v3 = (p: Vec3) => new Vector3(...p)

const marker = (over: Partial<Marker> & { check?: Check } = {}): Marker => baseMarker({ label: 'Door width', createdBy: null, ...over })

const anchor = (x: number, y: number, z: number) => ({ instanceId: INSTANCE, x, y, z })
const checked = (picked: Vec3, snapped: Vec3 | null, onScan: boolean) => ({ instanceId: INSTANCE, picked, snapped, residual: 0.001, tolerance: 0.005, onScan, u: 0.001, parts: [] })

describe('the angle arc', () => {
  const a: Vec3 = [2, 0.5, 1]
  const b: Vec3 = [0.5, 0.2, 1.1]
  const c: Vec3 = [0.9, 1.8, 2.0]
  const arc = arcPoints(a, b, c, 0.3, 30)

  it('runs from the first arm to the second at the given radius', () => {
    expect(arc).toHaveLength(31)
    for (const q of arc) expect(v3(q).distanceTo(v3(b))).toBeCloseTo(0.3, 9)
    const armA = v3(a).sub(v3(b))
    const armC = v3(c).sub(v3(b))
    expect(v3(arc[0]!).sub(v3(b)).angleTo(armA)).toBeCloseTo(0, 6)
    expect(v3(arc[30]!).sub(v3(b)).angleTo(armC)).toBeCloseTo(0, 6)
    // Evenly spaced chords: each step turns by the whole angle over the segments.
    const step = v3(arc[0]!).sub(v3(b)).angleTo(v3(arc[1]!).sub(v3(b)))
    expect(step).toBeCloseTo(armA.angleTo(armC) / 30, 9)
  })

  it('stays in the plane of the two arms', () => {
    const plane = new Plane().setFromCoplanarPoints(v3(a), v3(b), v3(c))
    for (const q of arc) expect(plane.distanceToPoint(v3(q))).toBeCloseTo(0, 9)
  })

  it('draws a straight angle as a half circle and nothing for a zero angle or a zero arm', () => {
    const straight = arcPoints([1, 0, 0], [0, 0, 0], [-1, 0, 0], 1, 8)
    expect(straight).toHaveLength(9)
    expect(v3(straight[4]!).angleTo(new Vector3(1, 0, 0))).toBeCloseTo(Math.PI / 2, 9)
    expect(arcPoints([1, 0, 0], [0, 0, 0], [2, 0, 0], 1)).toEqual([])
    expect(arcPoints([0, 0, 0], [0, 0, 0], [2, 0, 0], 1)).toEqual([])
  })
})

describe('the section rectangle', () => {
  // An upright plane facing +y through (0.5, 0.1, 0): u along +x, v up, as the server's frame gives it.
  const frame: SectionFrame = { origin: [0.5, 0.1, 0], u: [1, 0, 0], v: [0, 0, 1], n: [0, 1, 0] }
  const rect = sectionRectangle(frame, { uMin: -2, uMax: 3, vMin: 0, vMax: 4.5 })

  it('lies in the section plane over its extents', () => {
    const plane = new Plane().setFromNormalAndCoplanarPoint(v3(frame.n), v3(frame.origin))
    for (const q of rect) expect(plane.distanceToPoint(v3(q))).toBeCloseTo(0, 12)
    expect(rect[0]).toEqual([-1.5, 0.1, 0])
    expect(rect[2]).toEqual([3.5, 0.1, 4.5])
    const area = Math.abs(ShapeUtils.area(rect.map((q) => new Vector2(q[0], q[2]))))
    expect(area).toBeCloseTo(5 * 4.5, 12)
  })

  it('places flat u v rings in the plane', () => {
    expect(ringInPlane(frame, [0, 0, 1, 2])).toEqual([planePoint(frame, 0, 0), planePoint(frame, 1, 2)])
    expect(planePoint(frame, 1, 2)).toEqual([1.5, 0.1, 2])
  })
})

describe('anchors', () => {
  it('are drawn at their stored point on the points, and where picked (hollow, brick) off them', () => {
    const m = marker({
      anchors: [anchor(0, 0, 1), anchor(1, 0, 1)],
      check: check({ anchors: [checked([0, 0, 1], [0, 0.002, 1], true), checked([1, 0, 1], [1, 0.3, 1], false)] }),
    })
    expect(anchorDots(m)).toEqual([
      { at: [0, 0.002, 1], offScan: false },
      { at: [1, 0, 1], offScan: true },
    ])
    const view = markerView(m, 'm')
    expect(view.dots[0]).toMatchObject({ color: MARKER_KIND_COLOURS.distance, hollow: false })
    expect(view.dots[1]).toMatchObject({ color: BRICK, hollow: true })
  })

  it('are drawn where placed while the check is pending', () => {
    const m = marker({ anchors: [anchor(0, 0, 1), anchor(1, 0, 1)], check: check({ state: 'pending' }) })
    expect(anchorDots(m).map((d) => d.at)).toEqual([
      [0, 0, 1],
      [1, 0, 1],
    ])
  })
})

describe('labels', () => {
  it('read value ± U (k = 2) in the reader’s unit, with the state’s word and shape', () => {
    const m = marker({ anchors: [anchor(0, 0, 0), anchor(0.912, 0, 0)], check: check({ value: 0.912, unit: 'm', expandedUncertainty: 0.004 }) })
    expect(markerLabel(m, 'm')).toMatchObject({ title: 'Door width', value: '0.912\u00a0m \u00b1 4.0\u00a0mm (k = 2)', state: { word: 'on the points', shape: 'disc' } })
    expect(markerLabel(m, 'mm').value).toBe('912.0\u00a0mm \u00b1 4.0\u00a0mm (k = 2)')
    const view = markerView(m, 'm')
    expect(view.label?.at).toEqual([0.456, 0, 0])
    expect(view.strokes[0]?.color).toBe('#F2B134')
  })

  it('say "checking..." while pending, and the words of the other states', () => {
    expect(markerLabel(marker({ check: check({ state: 'pending' }) }), 'm')).toMatchObject({ value: 'checking...', state: { shape: 'spinner' } })
    expect(markerLabel(marker({ check: check({ state: 'off-scan' }) }), 'm')).toMatchObject({ value: '\u2014', state: { word: 'off the points', shape: 'ring-cross' } })
    expect(markerLabel(marker({ check: check({ state: 'too-few-points' }) }), 'm').state?.word).toBe('too sparse')
    expect(markerLabel(marker({ check: check({ state: 'invalid-geometry' }) }), 'm').state?.word).toBe('cannot be measured')
  })

  it('name a section’s clear width or area, and a clearance’s margin and outcome', () => {
    expect(markerLabel(marker({ kind: 'section', check: check({ value: 1.398, unit: 'm', expandedUncertainty: 0.006 }) }), 'm').value).toBe('clear width 1.398\u00a0m \u00b1 6.0\u00a0mm (k = 2)')
    expect(markerLabel(marker({ kind: 'section', check: check({ value: 2.5, unit: 'm2' }) }), 'm').value).toBe('area 2.500\u00a0m\u00b2')
    // Only the outcome of the clearance result matters to the label (the rest is left out, so not parsed).
    const clearance: Marker = {
      ...marker({ kind: 'clearance' }),
      check: check({ value: 0.031, unit: 'm', expandedUncertainty: 0.008, result: { kind: 'clearance', outcome: 'too-close-to-call' } as Check['result'] }),
    }
    expect(markerLabel(clearance, 'm')).toMatchObject({ value: 'margin 0.031\u00a0m \u00b1 8.0\u00a0mm (k = 2)', state: { word: 'too close to call', shape: 'half-disc' } })
  })

  it('fall back to the kind’s word for an empty name', () => {
    expect(markerLabel(marker({ kind: 'angle', label: '  ' }), 'm').title).toBe('angle')
  })
})

describe('the preview', () => {
  it('is nothing before the first click, dashed strokes and the value after', () => {
    expect(previewView('distance', [], null)).toBeNull()
    const one = previewView('distance', [[0, 0, 0]], null)!
    expect(one.strokes).toEqual([])
    expect(one.label).toBeNull()
    const two = previewView('distance', [[0, 0, 0], [1, 0, 0]], '1.000\u00a0m')!
    expect(two.strokes[0]).toMatchObject({ dashed: true, closed: false })
    expect(two.label).toMatchObject({ value: '1.000\u00a0m', at: [0.5, 0, 0] })
    const angle = previewView('angle', [[1, 0, 0], [0, 0, 0], [0, 1, 0]], '90.00\u00b0')!
    expect(angle.strokes).toHaveLength(2)
  })
})

describe('labels kept clear of one another', () => {
  // Boxes in screen pixels, y down; the expected lifts are worked by hand from the rule "move up until the
  // box's bottom is `gap` above the top of whatever it overlaps" (common practice for label stacking, no source).
  const box = (left: number, top: number, w = 100, h = 30) => ({ left, right: left + w, top, bottom: top + h })

  it('leaves boxes that do not overlap where they are', () => {
    expect(liftClear([box(0, 0), box(200, 0), box(0, 100)], [])).toEqual([0, 0, 0])
  })

  it('lifts a box over the one placed before it, then over a third, keeping the gap', () => {
    // A at 100..130; B overlaps A: bottom to 97, so top 67, dy -33; C overlaps both: over B's top 67, dy -66.
    expect(liftClear([box(0, 100), box(50, 100), box(20, 100)], [], 3)).toEqual([0, -33, -66])
  })

  it('keeps labels off obstacles such as anchor dots', () => {
    expect(liftClear([box(0, 100)], [{ left: 40, right: 56, top: 120, bottom: 136 }], 3)).toEqual([-13])
    // Touching only across the gap counts as overlapping; farther apart does not.
    expect(liftClear([box(0, 100)], [{ left: 0, right: 10, top: 132, bottom: 140 }], 3)).toEqual([-1])
    expect(liftClear([box(0, 100)], [{ left: 0, right: 10, top: 134, bottom: 140 }], 3)).toEqual([0])
  })
})

describe('labels placed around their markers', () => {
  // Worked by hand from the rule "the first free place of the list: where it is, above, right, left, below..."
  // (candidate positions, first fit: common practice for map labels, no source). Boxes 100 x 30, gap 3.
  const box = (left: number, top: number, w = 100, h = 30) => ({ left, right: left + w, top, bottom: top + h })
  it('leaves a free label where it is, and moves overlapping ones beside it, then above, not into a column', () => {
    // Four labels at one spot (markers sharing an anchor): one stays, the others go right, left and above.
    const moves = placeClear([box(200, 200), box(200, 200), box(200, 200), box(200, 200)], [], null, 3)
    expect(moves[0]).toEqual({ dx: 0, dy: 0 })
    // Right: one width plus the gap (103 px), its left edge exactly the gap beyond the first's right; then left.
    expect(moves[1]).toEqual({ dx: 103, dy: 0 })
    expect(moves[2]).toEqual({ dx: -103, dy: 0 })
    // Above: one height plus the gap (33 px) up.
    expect(moves[3]).toEqual({ dx: 0, dy: -33 })
  })
  it('keeps labels inside the frame', () => {
    const frame = { left: 0, right: 400, top: 0, bottom: 400 }
    // At the top right corner, above and right are out of the frame; the left is free.
    const moves = placeClear([box(300, 0), box(300, 0)], [], frame, 3)
    expect(moves[1]).toEqual({ dx: -103, dy: 0 })
  })
  it('draws the leader from the edge of the moved label back to its place', () => {
    // Moved straight up by 33 px: the leader leaves the bottom middle and runs down 18 px (33 - 15).
    expect(leaderLine(100, 30, 0, -33)).toEqual({ x: 50, y: 30, length: 18, angle: 90 })
  })
})
