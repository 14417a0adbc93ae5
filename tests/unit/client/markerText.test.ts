// How markers read in the drawer. The words are Spanmark's own word list; values
// follow its example "0.912\u00a0m ± 4.0\u00a0mm (k = 2)"; feet and inches use 1 ft = 0.3048\u00a0m exactly (NIST SP 811
// appendix B); a distance's horizontal and vertical parts are shown expanded, U = k u with k = 2 (GUM,
// JCGM 100:2008, 6.2.1).
import { describe, expect, it } from 'vitest'
import { CHECK_STATES, CLEARANCE_OUTCOMES, REVIEW_STATES } from '@shared/collab/states'
import { hasPendingCheck } from '@/composables/useMarkers'
import type { LengthUnit } from '@shared/format/units'
import type { Instance, Marker } from '@shared/schemas'
import { kindUi } from '@/kinds'
import { filterMarkers, lookOf, markerRow, residualText, valueKindOf, valueShort, valueText } from '@/components/markers/markerText'
import { check, INSTANCE_ID, marker } from './factories'

// Each kind's card facts, read through the client's kind registry (app/kinds) as the card reads them.
const distanceFacts = (m: Marker, unit: LengthUnit) => kindUi('distance').facts!(m, { markers: [], instances: [], unit })
const sectionFacts = (m: Marker, unit: LengthUnit) => kindUi('section').facts!(m, { markers: [], instances: [], unit })
const clearanceFacts = (m: Marker, markers: Marker[], instances: Instance[], unit: LengthUnit) => kindUi('clearance').facts!(m, { markers, instances, unit })

const distance = marker({
  kind: 'distance',
  check: check({
    value: 0.912,
    unit: 'm',
    standardUncertainty: 0.002,
    expandedUncertainty: 0.004,
    result: { kind: 'distance', dx: 0.6, dy: -0.8, dz: 0.0, horizontal: 1.0, vertical: 0, uHorizontal: 0.002, uVertical: 0.0015 },
  }),
})
const angle = marker({ kind: 'angle', label: 'Stair stringer', check: check({ value: 88.4, unit: 'deg', expandedUncertainty: 0.12 }) })
const area = marker({ kind: 'section', label: 'Plinth', check: check({ value: 1.2041, unit: 'm2' }) })
const pending = marker({ kind: 'distance', label: 'Moved', createdBy: null, check: check({ state: 'pending' }) })

describe('values', () => {
  it('writes a length with its expanded uncertainty as Spanmark writes it', () => {
    expect(valueText(distance, 'm')).toBe('0.912\u00a0m \u00b1 4.0\u00a0mm (k = 2)')
    expect(valueText(distance, 'mm')).toBe('912.0\u00a0mm \u00b1 4.0\u00a0mm (k = 2)')
    expect(valueShort(distance, 'm')).toBe('0.912\u00a0m \u00b1 4.0\u00a0mm')
  })
  it('writes feet and inches from the exact foot: 0.9144\u00a0m is 3 ft (NIST SP 811)', () => {
    const yard = marker({ check: check({ value: 0.9144, unit: 'm', expandedUncertainty: 0.0254 / 16 }) })
    expect(valueShort(yard, 'ft-in')).toBe(`3' 0" \u00b1 1/16"`)
  })
  it('writes angles in degrees and areas without an interval, whatever the length unit', () => {
    expect(valueKindOf(angle)).toBe('angle')
    expect(valueText(angle, 'ft-in')).toBe('88.40\u00b0 \u00b1 0.12\u00b0 (k = 2)')
    expect(valueKindOf(area)).toBe('area')
    expect(valueShort(area, 'm')).toBe('1.204\u00a0m\u00b2')
  })
  it('shows a dash while a check has no value yet', () => {
    expect(valueShort(pending, 'm')).toBe('\u2014')
  })
})

describe('state looks', () => {
  it('say Spanmark’s words, each state with a shape', () => {
    const words = [...CHECK_STATES, ...CLEARANCE_OUTCOMES, ...REVIEW_STATES].map((s) => lookOf(s).word)
    expect(words).toEqual([
      'checking...',
      'on the points',
      'off the points',
      'too sparse',
      'cannot be measured',
      'passes',
      'does not pass',
      'too close to call',
      'open',
      'changes asked',
      'signed off',
    ])
    for (const s of CHECK_STATES) expect(['disc', 'ring-cross', 'half-disc', 'spinner', 'ring']).toContain(lookOf(s).shape)
  })
  it('never tell two check states apart by colour alone: shape or word differ', () => {
    const keys = CHECK_STATES.map((s) => `${lookOf(s).shape}|${lookOf(s).word}`)
    expect(new Set(keys).size).toBe(CHECK_STATES.length)
  })
})

describe('table rows and filters', () => {
  it('keeps numbers and state order as sort keys, and names a former author', () => {
    const row = markerRow(distance, 'm')
    expect(row).toMatchObject({ kindWord: 'distance', value: 0.912, state: 'checked', stateOrder: 1, author: 'Ines Morrow', outcome: null })
    expect(markerRow(pending, 'm')).toMatchObject({ stateOrder: 0, author: 'former member', value: null })
  })
  it('filters by kind and by check state, empty lists meaning every one', () => {
    const all = [distance, angle, area, pending]
    expect(filterMarkers(all, { kinds: [], states: [] })).toHaveLength(4)
    expect(filterMarkers(all, { kinds: ['distance'], states: [] })).toEqual([distance, pending])
    expect(filterMarkers(all, { kinds: ['distance'], states: ['pending'] })).toEqual([pending])
    expect(filterMarkers(all, { kinds: ['clearance'], states: [] })).toEqual([])
  })
  it('asks the server again only while a check is pending', () => {
    expect(hasPendingCheck([distance, angle])).toBe(false)
    expect(hasPendingCheck([distance, pending])).toBe(true)
    expect(hasPendingCheck(undefined)).toBe(false)
  })
})

describe('facts', () => {
  it("gives a distance's parts, horizontal and vertical with U = 2u", () => {
    const facts = Object.fromEntries(distanceFacts(distance, 'm').map((f) => [f.term, f.text]))
    expect(facts.dX).toBe('0.600\u00a0m')
    expect(facts.dY).toBe('\u22120.800\u00a0m')
    expect(facts.horizontal).toBe('1.000\u00a0m \u00b1 4.0\u00a0mm')
    expect(facts.vertical).toBe('0.000\u00a0m \u00b1 3.0\u00a0mm')
  })
  it("gives a section's opening with its clear width and height", () => {
    const section = marker({
      kind: 'section',
      check: check({
        value: 0.912,
        unit: 'm',
        expandedUncertainty: 0.006,
        result: {
          kind: 'section',
          frame: { origin: [0, 0, 0], u: [1, 0, 0], v: [0, 0, 1], n: [0, 1, 0] },
          thickness: 0.05,
          pointCount: 12_000,
          extents: { uMin: -1, uMax: 1.5, vMin: 0, vMax: 2.4 },
          sample: [],
          outline: [],
          area: 3.1,
          spacing: 0.004,
          opening: {
            seed: [0, 1],
            outline: [],
            area: 1.8,
            clearWidth: 0.912,
            clearWidthAtV: 1.2,
            clearHeight: 2.04,
            clearHeightAtU: 0.1,
            uncertainty: { width: 0.006, height: 0.006, parts: [] },
            resolution: 0.002,
            method: 'grid',
          },
          openingProblem: null,
        },
      }),
    })
    const facts = Object.fromEntries(sectionFacts(section, 'm').map((f) => [f.term, f.text]))
    expect(facts.extents).toBe('2.500\u00a0m along u \u00d7 2.400\u00a0m along v')
    expect(facts['clear width']).toBe('0.912\u00a0m \u00b1 6.0\u00a0mm')
    expect(facts['clear height']).toBe('2.040\u00a0m \u00b1 6.0\u00a0mm')
  })
  it("names a clearance's object placement and a section that is gone", () => {
    const c = marker({ kind: 'clearance', params: { objectInstanceId: INSTANCE_ID, sectionMarkerId: distance.id } })
    const instances = [{ id: INSTANCE_ID, scanName: 'Organ case, east' }] as never
    const facts = Object.fromEntries(clearanceFacts(c, [], instances, 'm').map((f) => [f.term, f.text]))
    expect(facts.object).toBe('Organ case, east')
    expect(facts.through).toBe('a removed section')
  })
  it("states an anchor's residual against its tolerance", () => {
    expect(residualText(0.0012, 0.005, 'm')).toBe('1.2\u00a0mm \u2264 5.0\u00a0mm')
    expect(residualText(0.0081, 0.005, 'm')).toBe('8.1\u00a0mm > 5.0\u00a0mm')
  })
})
