// Close reasons fit a WebSocket close frame: RFC 6455 section 5.5 caps a control frame's payload at 125
// bytes, 2 of them the status code, so a reason is at most 123 bytes of UTF-8 (ws throws a RangeError past it).
import { describe, expect, it } from 'vitest'
import { CLOSE_CODES, CLOSE_REASON_MAX_BYTES, closeReason } from '@shared/collab/documents'
import { LIVE_OPERATIONS, liveOperationOf } from '@shared/collab/operations'

const bytes = (s: string) => new TextEncoder().encode(s).byteLength

describe('closeReason', () => {
  it('keeps a short reason as it is', () => {
    expect(closeReason('marker 5e0e0000-0000-4000-8000-000000000001: anchors: too few')).toBe('marker 5e0e0000-0000-4000-8000-000000000001: anchors: too few')
  })

  it('cuts a long one, multi-byte characters included, to at most 123 bytes on a character boundary', () => {
    const long = `placement 5e0e0000-0000-4000-8000-000000000001: ${'the colour “ochre” is not a #RRGGBB colour; '.repeat(5)}`
    const cut = closeReason(long)
    expect(CLOSE_REASON_MAX_BYTES).toBe(123)
    expect(bytes(cut)).toBeLessThanOrEqual(123)
    expect(cut.endsWith('…')).toBe(true)
    expect(long.startsWith(cut.slice(0, -1))).toBe(true)
  })

  it('gives every close code the application range (RFC 6455 7.4.2: 4000-4999 are private), bar the standard two', () => {
    for (const [name, code] of Object.entries(CLOSE_CODES)) {
      if (name === 'goingAway' || name === 'serverError') expect([1001, 1011]).toContain(code)
      else expect(code >= 4000 && code <= 4999, name).toBe(true)
    }
    expect(new Set(Object.values(CLOSE_CODES)).size).toBe(Object.keys(CLOSE_CODES).length)
  })
})

describe('liveOperationOf', () => {
  it('names every change of the work and record documents with an operation of the registry', () => {
    expect(liveOperationOf('work', 'markers', 'add')).toBe('markerCreate')
    expect(liveOperationOf('work', 'markers', 'update')).toBe('markerUpdate')
    expect(liveOperationOf('work', 'markers', 'delete')).toBe('markerDelete')
    expect(liveOperationOf('work', 'instances', 'update')).toBe('placementMove')
    expect(liveOperationOf('work', 'instances', 'add')).toBe('placementAdd')
    expect(liveOperationOf('work', 'instances', 'delete')).toBe('placementRemove')
    expect(liveOperationOf('work', 'meta', 'update')).toBe('writeMeta')
    expect(liveOperationOf('work', 'anything else', 'add')).toBe('writeUnknown')
    expect(liveOperationOf('record', 'markers', 'update')).toBe('writeRecord')
    for (const name of ['writeMeta', 'writeUnknown', 'placementAdd', 'placementRemove'] as const) expect(LIVE_OPERATIONS[name]).toHaveProperty('refused')
    expect(LIVE_OPERATIONS.writeRecord.right).toBeNull()
  })
})
