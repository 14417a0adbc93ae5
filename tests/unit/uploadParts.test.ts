import { describe, expect, it } from 'vitest'
import { MAX_PARTS, partBytes, partSizeFor } from '../../server/services/uploads'

const MiB = 1024 ** 2
const GiB = 1024 ** 3

// Amazon S3 API reference, UploadPart and "Amazon S3 multipart upload limits": part numbers 1 to 10,000;
// each part at least 5 MiB except the last, at most 5 GiB.
describe('part sizes of a resumable upload', () => {
  it('keeps 16 MiB parts while a file fits in 10,000 of them', () => {
    expect(partSizeFor(1, 16 * MiB)).toBe(16 * MiB)
    expect(partSizeFor(10_000 * 16 * MiB, 16 * MiB)).toBe(16 * MiB)
  })

  it('grows the part, in whole MiB, so a file up to 100 GiB and beyond stays within 10,000 parts', () => {
    for (const size of [10_000 * 16 * MiB + 1, 100 * GiB, 100 * GiB + 12_345, 1024 * GiB]) {
      const part = partSizeFor(size, 16 * MiB)
      expect(part % MiB).toBe(0)
      expect(part).toBeGreaterThanOrEqual(5 * MiB)
      expect(part).toBeLessThanOrEqual(5 * GiB)
      expect(Math.ceil(size / part)).toBeLessThanOrEqual(MAX_PARTS)
    }
    expect(MAX_PARTS).toBe(10_000)
  })

  it('gives the last part what is left', () => {
    const row = { declared_size: 100 * MiB + 7, part_size: 16 * MiB, part_count: 7 }
    expect(partBytes(row, 1)).toBe(16 * MiB)
    expect(partBytes(row, 7)).toBe(100 * MiB + 7 - 6 * 16 * MiB)
  })
})
