import { describe, expect, it } from 'vitest'
import type { ScanFormat } from '../../../server/points/readers/index'
import { buildLas, samplePoints } from './lib/lasBuilder'
import { byteByByte, fixture, readPieces, sameAs, splitAt } from './lib/readHelpers'
import { SAMPLE_STATION_LOG, plyWithVertexList, sampleCloud } from './lib/samples'
import { writePcd, writePly, writeXyz } from './lib/writers'

/**
 * A reader fed the same file in different chunkings must give the same points: here every two-chunk
 * split of each small file and one byte at a time, against one whole-file read (the reference is the
 * same reader on one chunk; the files themselves are checked against outside parsers elsewhere).
 */

const cloud = sampleCloud()
const text = (s: string) => new TextEncoder().encode(s)

const FILES: [string, ScanFormat, Uint8Array, number][] = [
  ['PLY ascii, CRLF, element before and faces after the vertices', 'ply', writePly(cloud, 'ascii', { leadingElement: true, lineEnding: '\r\n' }), 23],
  ['PLY binary LE with elements before and after', 'ply', writePly(cloud, 'binary_little_endian', { leadingElement: true }), 23],
  ['PLY binary BE, double positions, ushort colour', 'ply', writePly(cloud, 'binary_big_endian', { positionType: 'double', colorType: 'ushort' }), 23],
  ['PLY binary LE with a list inside the vertex', 'ply', plyWithVertexList(cloud), 23],
  ['XYZ csv with header row, comments and blank lines', 'xyz', writeXyz(cloud, { delimiter: ',', headerRow: 'X,Y,Z,R,G,B,Intensity', comments: ['# exported', '', '// note'] }), 23],
  ['XYZ space-delimited, CRLF', 'xyz', writeXyz({ positions: cloud.positions }, { delimiter: '  ', lineEnding: '\r\n' }), 23],
  ['XYZ semicolon with decimal commas', 'xyz', text('x;y;z\n1,5;2,25;-3,125\n0,5;1;2\n'), 2],
  ['PCD ascii', 'pcd', writePcd(cloud, 'ascii'), 23],
  ['PCD binary', 'pcd', writePcd(cloud, 'binary'), 23],
  [
    'LAS 1.2 format 3 with a VLR and extra bytes',
    'las',
    buildLas({ minor: 2, pointFormat: 3, scale: [0.01, 0.01, 0.001], offset: [500, 1000, 0], points: samplePoints(17, true), vlrs: [{ userId: 'TEST', recordId: 7, payload: text('payload of the test vlr') }], extraBytes: 5 }),
    17,
  ],
  ['LAS 1.4 format 7', 'las', buildLas({ minor: 4, pointFormat: 7, scale: [0.001, 0.001, 0.001], offset: [-20, 30, 5], points: samplePoints(19, true) }), 19],
  ['station log', 'station-log', text(SAMPLE_STATION_LOG), 4],
]

describe('chunk boundaries', () => {
  for (const [name, format, bytes, expected] of FILES) {
    it(`${name}: every two-chunk split and byte by byte give the same points`, async () => {
      const whole = await readPieces([bytes], format)
      expect(whole.count).toBe(expected)
      const batched = await readPieces([bytes], format, 5)
      expect(batched.batches).toBe(Math.ceil(expected / 5))
      expect(sameAs(batched, whole)).toBe(true)
      const failures: number[] = []
      for (let cut = 0; cut <= bytes.length; cut++) {
        const split = await readPieces(splitAt(bytes, cut), format, cut % 2 ? 5 : undefined)
        if (!sameAs(split, whole)) failures.push(cut)
      }
      expect(failures).toEqual([])
      expect(sameAs(await readPieces(byteByByte(bytes), format), whole)).toBe(true)
    })
  }

  // About 420 decompressions: some 7 s on this machine when quiet, and more than the default 20 s when it is
  // busy; a minute leaves room without changing what is compared.
  it('LAZ (crate.laz): sampled two-chunk splits and byte by byte give the same points', { timeout: 60_000 }, async () => {
    // Every offset would mean 18 000 decompressions; the header region is covered byte by byte, the rest
    // at a stride. The LAZ reader collects the chunks, so the split cannot matter beyond the header.
    const bytes = fixture('crate.laz')
    const whole = await readPieces([bytes], 'laz')
    expect(whole.count).toBe(5220)
    const cuts = new Set<number>()
    for (let c = 0; c <= 400; c++) cuts.add(c)
    for (let c = 400; c <= bytes.length; c += 997) cuts.add(c)
    cuts.add(bytes.length)
    for (const cut of cuts) expect(sameAs(await readPieces(splitAt(bytes, cut), 'laz'), whole)).toBe(true)
    expect(sameAs(await readPieces(byteByByte(bytes), 'laz'), whole)).toBe(true)
  })
})
