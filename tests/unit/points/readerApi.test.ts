import { describe, expect, it } from 'vitest'
import { ScanFormatError, createReader, readAll, type PointBatch, type ScanFormat } from '../../../server/points/readers/index'
import { buildLas, samplePoints } from './lib/lasBuilder'
import { sampleCloud } from './lib/samples'
import { writePcd, writePly } from './lib/writers'

/** The readers' shared contract (batches, buffers, caps); behaviour of this project, no outside source. */

describe('reader API', () => {
  const ply = writePly(sampleCloud(10), 'binary_little_endian')

  it('batches of batchSize; by default each batch owns its arrays', async () => {
    const batches: PointBatch[] = []
    const reader = createReader('ply', { batchSize: 4, onBatch: (b) => batches.push(b) })
    reader.push(ply)
    expect(reader.header?.format).toBe('ply')
    const summary = await reader.end()
    expect(batches.map((b) => b.count)).toEqual([4, 4, 2])
    expect(new Set(batches.map((b) => b.positions.buffer)).size).toBe(3)
    expect(summary.pointCount).toBe(10)
    expect(reader.pointCount).toBe(10)
  })

  it('reuseBuffers refills the same arrays (valid only during the callback)', async () => {
    const buffers = new Set<ArrayBufferLike>()
    const firsts: number[] = []
    const reader = createReader('ply', {
      batchSize: 4,
      reuseBuffers: true,
      onBatch: (b) => {
        buffers.add(b.positions.buffer)
        firsts.push(b.positions[0] as number)
      },
    })
    reader.push(ply)
    await reader.end()
    expect(buffers.size).toBe(1)
    expect(firsts).toEqual([-2, -1, 0])
  })

  it('a header declaring more data than byteLength fails at the header (LAS, PCD)', async () => {
    const las = buildLas({ minor: 2, pointFormat: 0, scale: [0.01, 0.01, 0.01], offset: [0, 0, 0], points: samplePoints(10, false) })
    const reader = createReader('las', { onBatch: () => {}, byteLength: las.length - 20 })
    expect(() => reader.push(las.subarray(0, 300))).toThrow(
      "header field 'number of point records': 10 points of 20 bytes from byte 227 need 427 bytes, the file holds 407",
    )
    const pcd = writePcd(sampleCloud(10), 'binary')
    await expect(readAll(pcd.subarray(0, pcd.length - 12), 'pcd', { byteLength: pcd.length - 12 })).rejects.toThrow(
      /POINTS 10 of 20 bytes need 200 bytes after the header, but the file holds 188/,
    )
  })

  it('maxPoints caps the declared count before anything is allocated for it', async () => {
    await expect(readAll(ply, 'ply', { maxPoints: 5 })).rejects.toThrow('element vertex declares 10 points, more than the 5')
  })

  it('a binary PLY with CRLF header lines reads like its LF twin', async () => {
    const crlf = writePly(sampleCloud(10), 'binary_little_endian', { lineEnding: '\r\n' })
    expect(Array.from((await readAll(crlf, 'ply')).positions)).toEqual(Array.from((await readAll(ply, 'ply')).positions))
  })

  it('unknown formats are refused by the factory too; E57 has a reader', () => {
    expect(createReader('e57', { onBatch: () => {} }).format).toBe('e57')
    expect(() => createReader('obj' as ScanFormat, { onBatch: () => {} })).toThrow(ScanFormatError)
  })
})
