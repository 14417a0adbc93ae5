import { describe, expect, it } from 'vitest'
import { SNIFF_BYTES, detectFormat } from '../../../server/points/readers/index'
import { fixture } from './lib/readHelpers'
import { SAMPLE_STATION_LOG, sampleCloud } from './lib/samples'
import { writePcd, writePly, writeXyz } from './lib/writers'

/**
 * Format sniffing by content, each against its format's own opening bytes: PLY 'ply' line (Turk 1994),
 * 'LASF' and the point format byte's compression bits at offset 104 (ASPRS LAS 1.4 R15; LAZ sets bit 7),
 * PCD's VERSION/FIELDS header (PCL docs), E57's 'ASTM-E57' signature (ASTM E2807).
 */

const cloud = sampleCloud(5)
const text = (s: string) => new TextEncoder().encode(s)
const head = (b: Uint8Array) => b.subarray(0, SNIFF_BYTES)

describe('detectFormat', () => {
  it('recognises each format by content, with or without a matching name', () => {
    const samples: [Uint8Array, string, string][] = [
      [writePly(cloud, 'ascii'), 'a.ply', 'ply'],
      [writePly(cloud, 'binary_big_endian'), 'scan', 'ply'],
      [fixture('crate.las'), 'crate.las', 'las'],
      [fixture('crate.laz'), 'crate.laz', 'laz'],
      [writePcd(cloud, 'binary'), 'b.pcd', 'pcd'],
      [writePcd(cloud, 'ascii'), 'upload.bin', 'pcd'],
      [writeXyz(cloud), 'c.xyz', 'xyz'],
      [writeXyz(cloud, { delimiter: ',', headerRow: 'x,y,z,r,g,b,intensity' }), 'c.csv', 'xyz'],
      [writeXyz(cloud, { delimiter: '\t' }), 'c.TXT', 'xyz'],
      [text(SAMPLE_STATION_LOG), 'bay-3.log', 'station-log'],
      [text(SAMPLE_STATION_LOG), 'bay-3.txt', 'station-log'],
    ]
    for (const [bytes, name, format] of samples) expect(detectFormat(head(bytes), name), name).toBe(format)
  })

  it('.las and .laz are one family: the compression bits decide', () => {
    expect(detectFormat(fixture('crate.laz'), 'mislabelled.las')).toBe('laz')
    expect(detectFormat(fixture('crate.las'), 'mislabelled.laz')).toBe('las')
  })

  it('refuses an extension that disagrees with the content, naming both', () => {
    expect(() => detectFormat(fixture('crate.las'), 'scan.ply')).toThrow('byte 0: file is named .ply but its content starts like a LAS file')
    expect(() => detectFormat(writePly(cloud, 'ascii'), 'scan.pcd')).toThrow('file is named .pcd but its content starts like a PLY file')
    expect(() => detectFormat(writeXyz(cloud), 'scan.las')).toThrow('file is named .las but its content starts like text in numeric columns')
  })

  it('E57 is recognised by its signature; other files are named', () => {
    const e57 = new Uint8Array(64)
    e57.set(text('ASTM-E57'))
    expect(detectFormat(e57, 'site.e57')).toBe('e57')
    expect(() => detectFormat(e57, 'site.las')).toThrow('byte 0: file is named .las but its content starts like an E57 file')
    expect(() => detectFormat(Uint8Array.from([0x50, 0x4b, 0x03, 0x04, 0, 0]), 'scans.zip')).toThrow('the content is a ZIP archive')
    expect(() => detectFormat(Uint8Array.from([0, 1, 2, 3, 4, 5]), 'blob')).toThrow(/binary data that is not a point format/)
    expect(() => detectFormat(new Uint8Array(0), 'x.ply')).toThrow('byte 0: the file is empty')
  })

  it('text that is not points is refused at its first line', () => {
    expect(() => detectFormat(text('\n\nMeeting notes\nbring the tripod\n'), 'notes.txt')).toThrow(
      "line 3: the content is text but not points in numeric columns ('Meeting notes')",
    )
  })

  it('a sniff window that cuts the last line still decides; a BOM is skipped', () => {
    const long = writeXyz(sampleCloud(2000))
    expect(long.length).toBeGreaterThan(SNIFF_BYTES)
    expect(detectFormat(head(long), 'big.xyz')).toBe('xyz')
    expect(detectFormat(text('\uFEFFx;y;z\n1,5;2;3\n'), 'excel.csv')).toBe('xyz')
  })
})
