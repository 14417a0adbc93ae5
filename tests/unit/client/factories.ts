// A tiny factory of API markers for the drawer's helpers, parsed by the shared Marker schema so it cannot
// drift from the contract.
import { blankCheck, Marker, type Check } from '@shared/schemas'

let n = 0
const id = () => `00000000-0000-4000-8000-${String(++n).padStart(12, '0')}`
export const INSTANCE_ID = '10000000-0000-4000-8000-000000000001'

export function check(overrides: Partial<Check> = {}): Check {
  return { ...blankCheck('checked', 1, null, '2026-03-02T10:00:00.000Z'), ...overrides }
}

export function marker(overrides: Partial<Marker> & { check?: Check } = {}): Marker {
  return Marker.parse({
    id: id(),
    sceneId: '20000000-0000-4000-8000-000000000001',
    kind: 'distance',
    label: 'Hall door, jamb to jamb',
    anchors: [],
    params: {},
    revision: 1,
    createdBy: { id: '30000000-0000-4000-8000-000000000001', name: 'Ines Morrow' },
    updatedBy: null,
    createdAt: '2026-03-02T09:59:00.000Z',
    updatedAt: '2026-03-02T09:59:00.000Z',
    check: check(),
    ...overrides,
  })
}
