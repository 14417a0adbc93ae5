import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { SNIFF_BYTES, ScanFormatError, createReader, detectFormat } from '../../../server/points/readers/index'
import { FIXTURES, fixture } from './lib/readHelpers'

/**
 * The bad-input corpus (tests/fixtures/bad, table in expected.json). Each file goes the way an upload
 * does: the format is sniffed from its first bytes and name, then it is streamed in 1 KiB chunks. Each
 * must fail with a ScanFormatError whose message starts with where (line, byte or header field) and
 * contains the table's fragment. (The expected failures follow the format descriptions: PLY, Turk
 * 1994; LAS, ASPRS 1.4 R15; PCD, the PCL docs; E57, ASTM E2807's 'ASTM-E57' signature.)
 */

interface Case {
  file: string
  fragment: string
  why: string
}

const table = JSON.parse(readFileSync(`${FIXTURES}bad/expected.json`, 'utf8')) as Case[]
const LOCATION = /^(line \d+|byte \d+|page \d+ \(byte \d+\)|XML path \S+|header( line \d+| field '[^']+')?): /

async function readUpload(file: string, options: { byteLength?: number } = {}): Promise<number> {
  const bytes = fixture(`bad/${file}`)
  const format = detectFormat(bytes.subarray(0, SNIFF_BYTES), file)
  let points = 0
  const reader = createReader(format, { ...options, onBatch: (b) => (points += b.count) })
  for (let at = 0; at < bytes.length; at += 1024) reader.push(bytes.subarray(at, at + 1024))
  await reader.end()
  return points
}

describe('bad input corpus', () => {
  it('covers every case the brief lists', () => {
    const files = table.map((c) => c.file)
    for (const needed of [
      'truncated-binary.ply',
      'truncated.las',
      'count-more-than-body.ply',
      'count-fewer-than-body.ply',
      'nan-coordinate.xyz',
      'inf-coordinate.ply',
      'zero-points.ply',
      'unknown-type.ply',
      'las-content.ply',
      'prose.txt',
      'huge-count.ply',
      'empty.xyz',
      'compressed.pcd',
      'scan.e57',
    ]) {
      expect(files).toContain(needed)
    }
  })

  for (const { file, fragment, why } of table) {
    it(`${file} (${why}): "${fragment}"`, async () => {
      const error = await readUpload(file).then(
        (points) => new Error(`read ${points} points without an error`),
        (e: unknown) => e,
      )
      expect(error).toBeInstanceOf(ScanFormatError)
      const message = (error as Error).message
      expect(message).toMatch(LOCATION)
      expect(message).toContain(fragment)
    })
  }

  it('a 10^12-point header fails at the header when the upload size is known, without allocating', async () => {
    const size = fixture('bad/huge-count.ply').length
    await expect(readUpload('huge-count.ply', { byteLength: size })).rejects.toThrow(/^header line 3: element vertex declares/)
    const reader = createReader('ply', { onBatch: () => {}, byteLength: size, maxPoints: 1e13 })
    expect(() => reader.push(fixture('bad/huge-count.ply'))).toThrow(
      'header: the declared elements need at least 12000000000000 bytes after the header, but the file holds 4',
    )
  })

  it('a failed reader stays failed and rethrows the same error', async () => {
    const reader = createReader('ply', { onBatch: () => {} })
    let first: unknown
    try {
      reader.push(fixture('bad/unknown-type.ply'))
    } catch (e) {
      first = e
    }
    expect(first).toBeInstanceOf(ScanFormatError)
    expect(() => reader.push(new Uint8Array(1))).toThrow(first as Error)
    await expect(reader.end()).rejects.toBe(first)
  })

  it("errors from the consumer's own callback pass through unchanged", async () => {
    const mine = new Error('disk full')
    const reader = createReader('xyz', {
      onBatch: () => {
        throw mine
      },
    })
    reader.push(new TextEncoder().encode('1 2 3\n'))
    await expect(reader.end()).rejects.toBe(mine)
  })
})
