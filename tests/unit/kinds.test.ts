// Marker kinds as modules: one list per side (shared/kinds, server/markers/kinds, app/kinds) that must name the
// same kinds, and checks stored before the kinds were modules (one slot per kind) still read as today's.
import { describe, expect, it } from 'vitest'
import { Check, DEPENDENT_PARAMS, KINDS, MARKER_KINDS, MarkerCreateBody, kindSpec, namesMarker, resultOf } from '@shared/schemas'
import { kindCheck } from '../../server/markers/kinds'
import { MARKER_KIND_UIS, kindOfTool, kindUi } from '@/kinds'

describe('the kind registries', () => {
  it('name the same kinds on every side, each with its check, its tool and its own key', () => {
    expect(MARKER_KINDS).toEqual(KINDS.map((k) => k.kind))
    for (const kind of MARKER_KINDS) {
      expect(typeof kindCheck(kind).check, kind).toBe('function')
      expect(kindUi(kind).kind).toBe(kind)
      expect(kindOfTool(kindUi(kind).tool.id)?.kind).toBe(kind)
      expect(kindSpec(kind).kind).toBe(kind)
    }
    expect(MARKER_KIND_UIS.map((k) => k.kind)).toEqual([...MARKER_KINDS])
    const keys = MARKER_KIND_UIS.map((k) => k.tool.key)
    expect(new Set(keys).size).toBe(keys.length)
  })

  it('says which params name another marker, one id or a list, and of which kind', () => {
    for (const d of DEPENDENT_PARAMS) expect(MARKER_KINDS).toContain(d.on)
    expect(namesMarker({ sectionMarkerId: 'a' }, 'sectionMarkerId', 'a')).toBe(true)
    expect(namesMarker({ alsoThrough: ['b', 'a'] }, 'alsoThrough', 'a')).toBe(true)
    expect(namesMarker({ alsoThrough: ['b'] }, 'alsoThrough', 'a')).toBe(false)
    expect(namesMarker({}, 'sectionMarkerId', 'a')).toBe(false)
  })

  it('refuses an unknown kind and names the kinds there are', () => {
    const r = MarkerCreateBody.safeParse({ kind: 'volume', anchors: [], params: {} })
    expect(r.success).toBe(false)
    expect(r.error!.issues[0]!.message).toContain(MARKER_KINDS.join(', '))
  })
})

describe('checks stored before kinds were modules', () => {
  const frame = { state: 'checked', reason: null, value: 1.2, unit: 'm', standardUncertainty: 0.001, expandedUncertainty: 0.002, coverageFactor: 2, parts: [], anchors: [], checkedAt: null, basedOn: 3 }
  it('read a distance slot as the distance result', () => {
    const old = { ...frame, distance: { dx: 1, dy: 0, dz: 0, horizontal: 1, vertical: 0, uHorizontal: 0.001, uVertical: 0.001 }, angle: null, section: null, clearance: null }
    const c = Check.parse(old)
    expect(resultOf(c, 'distance')).toMatchObject({ kind: 'distance', horizontal: 1 })
    expect('distance' in c).toBe(false)
  })
  it('read an empty check (pending, stopped) as no result', () => {
    expect(Check.parse({ ...frame, distance: null, angle: null, section: null, clearance: null }).result).toBeNull()
  })
  it('keep a check already in the new shape as it is', () => {
    expect(Check.parse({ ...frame, result: { kind: 'angle', nearBound: true } }).result).toEqual({ kind: 'angle', nearBound: true })
  })
})
