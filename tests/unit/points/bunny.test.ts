import bunny from 'bunny'
import { describe, expect, it } from 'vitest'
import { readAll, type ScanFormat } from '../../../server/points/readers/index'
import { boundsOf } from './lib/readHelpers'
import { writePcd, writePly, writeXyz } from './lib/writers'

/**
 * The Stanford bunny from the npm `bunny` package 1.0.1 (public domain), written to each format and read
 * back. Check values: 1839 vertices, bounds min (-4.958475, -0.003149, -3.729833),
 * max (4.94885, 9.654748, 3.810639) (derived from the package's own arrays).
 */

const { positions, cells } = bunny
const flat = positions.flat()
const MIN = [-4.958475, -0.003149, -3.729833]
const MAX = [4.94885, 9.654748, 3.810639]

describe('Stanford bunny (npm bunny 1.0.1) round trip', () => {
  it('the package itself has the check values', () => {
    expect(positions.length).toBe(1839)
    const b = boundsOf(flat)
    expect(b.min).toEqual(MIN)
    expect(b.max).toEqual(MAX)
  })

  const files: [string, ScanFormat, Uint8Array, number][] = [
    ['PLY ascii with its 3674 faces', 'ply', writePly({ positions: flat, faces: cells.flat() }, 'ascii'), 0],
    ['PLY binary LE float with faces', 'ply', writePly({ positions: flat, faces: cells.flat() }, 'binary_little_endian'), 1e-6],
    ['PLY binary BE double', 'ply', writePly({ positions: flat }, 'binary_big_endian', { positionType: 'double' }), 0],
    ['XYZ', 'xyz', writeXyz({ positions: flat }), 0],
    ['CSV with header row', 'xyz', writeXyz({ positions: flat }, { delimiter: ',', headerRow: 'x,y,z' }), 0],
    ['PCD ascii', 'pcd', writePcd({ positions: flat }, 'ascii'), 0],
    ['PCD binary float', 'pcd', writePcd({ positions: flat }, 'binary'), 1e-6],
    ['PCD binary double', 'pcd', writePcd({ positions: flat }, 'binary', { double: true }), 0],
  ]
  for (const [name, format, bytes, tolerance] of files) {
    it(`${name}: 1839 points and the package's bounds`, async () => {
      const cloud = await readAll(bytes, format, { chunkSize: 4096 })
      expect(cloud.count).toBe(1839)
      const { min, max } = cloud.summary.bounds
      for (let a = 0; a < 3; a++) {
        // float32 files: within float32 rounding of values below 10 (about 5e-7).
        expect(Math.abs((min[a] as number) - (MIN[a] as number))).toBeLessThanOrEqual(tolerance)
        expect(Math.abs((max[a] as number) - (MAX[a] as number))).toBeLessThanOrEqual(tolerance)
      }
      if (format === 'ply' && cloud.header.format === 'ply' && name.includes('faces')) {
        expect(cloud.header.elements.map((e) => [e.name, e.count])).toEqual([
          ['vertex', 1839],
          ['face', 3674],
        ])
      }
    })
  }
})
