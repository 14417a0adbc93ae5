import { describe, expect, it } from 'vitest'
import { readAll, type PcdHeaderInfo } from '../../../server/points/readers/index'
import { concatBytes } from './lib/writers'

/**
 * PCD 0.7 as the Point Cloud Library documents it ("The PCD (Point Cloud Data) file format", PCL docs):
 * header keys VERSION FIELDS SIZE TYPE COUNT WIDTH HEIGHT VIEWPOINT POINTS DATA; rgb packed as the bits
 * of a float, 0x00RRGGBB; rgba as a uint32 0xAARRGGBB; binary data little-endian (what PCL writes on
 * x86, from memory).
 */

const encode = (s: string) => new TextEncoder().encode(s)

/** The bits of a float32, via the platform's IEEE 754 view: the outside reference for packed colour. */
function floatBits(value: number): number {
  const view = new DataView(new ArrayBuffer(4))
  view.setFloat32(0, value)
  return view.getUint32(0)
}

describe('PCD', () => {
  it("the PCL documentation's ascii example header (VERSION .7, rgb as an exponent float, from memory)", async () => {
    const text = [
      '# .PCD v.7 - Point Cloud Data file format',
      'VERSION .7',
      'FIELDS x y z rgb',
      'SIZE 4 4 4 4',
      'TYPE F F F F',
      'COUNT 1 1 1 1',
      'WIDTH 3',
      'HEIGHT 1',
      'VIEWPOINT 0 0 0 1 0 0 0',
      'POINTS 3',
      'DATA ascii',
      '0.93773 0.33763 0 4.2108e+06',
      '0.90805 0.35641 0 4.2108e+06',
      '0.81915 0.32 0 4.2108e+06',
      '',
    ].join('\n')
    const cloud = await readAll(encode(text), 'pcd')
    expect(cloud.count).toBe(3)
    expect(Array.from(cloud.positions.subarray(0, 3))).toEqual([0.93773, 0.33763, 0])
    const bits = floatBits(4.2108e6)
    expect(Array.from(cloud.colors!.subarray(0, 3))).toEqual([(bits >> 16) & 255, (bits >> 8) & 255, bits & 255])
    expect((cloud.header as PcdHeaderInfo).version).toBe('.7')
  })

  it('binary with extra fields (normals, a COUNT 33 descriptor, padding), rgba and intensity', async () => {
    const header = encode(
      [
        'VERSION 0.7',
        'FIELDS normal_x x y z _ rgba intensity fpfh',
        'SIZE 4 8 8 8 1 4 2 4',
        'TYPE F F F F U U U F',
        'COUNT 1 1 1 1 3 1 1 33',
        'WIDTH 2',
        'HEIGHT 2',
        'POINTS 4',
        'DATA binary',
        '',
      ].join('\n'),
    )
    const record = 4 + 24 + 3 + 4 + 2 + 33 * 4
    const body = new Uint8Array(4 * record)
    const view = new DataView(body.buffer)
    for (let i = 0; i < 4; i++) {
      const at = i * record
      view.setFloat32(at, 9, true)
      view.setFloat64(at + 4, 1000.125 + i, true)
      view.setFloat64(at + 12, -i / 3, true)
      view.setFloat64(at + 20, 1e-9 * i, true)
      view.setUint32(at + 31, (0x80 << 24) | (i * 10 << 16) | (i * 20 << 8) | (i * 30), true)
      view.setUint16(at + 35, 500 + i, true)
    }
    const cloud = await readAll(concatBytes([header, body]), 'pcd', { chunkSize: 50 })
    expect(cloud.count).toBe(4)
    for (let i = 0; i < 4; i++) {
      expect(Array.from(cloud.positions.subarray(i * 3, i * 3 + 3))).toEqual([1000.125 + i, -i / 3, 1e-9 * i])
      expect(Array.from(cloud.colors!.subarray(i * 3, i * 3 + 3))).toEqual([i * 10, i * 20, i * 30])
      expect(cloud.intensities![i]).toBe(500 + i)
    }
    const info = cloud.header as PcdHeaderInfo
    expect([info.width, info.height, info.points]).toEqual([2, 2, 4])
  })

  it('POINTS must be WIDTH x HEIGHT; an unknown DATA is refused; counts against the body', async () => {
    const head = (extra: string) =>
      `VERSION 0.7\nFIELDS x y z\nSIZE 4 4 4\nTYPE F F F\nCOUNT 1 1 1\nWIDTH 2\nHEIGHT 1\n${extra}`
    await expect(readAll(encode(head('POINTS 3\nDATA ascii\n1 2 3\n')), 'pcd')).rejects.toThrow(
      'header line 8: POINTS 3 is not WIDTH x HEIGHT (2 x 1 = 2)',
    )
    await expect(readAll(encode(head('POINTS 2\nDATA binary_packed\n')), 'pcd')).rejects.toThrow(
      "header line 9: DATA 'binary_packed' is not ascii, binary or binary_compressed",
    )
    await expect(readAll(encode(head('POINTS 2\nDATA ascii\n1 2 3\n')), 'pcd')).rejects.toThrow(
      'line 10: file ends after 1 of 2 points declared in the header',
    )
    await expect(readAll(encode(head('POINTS 2\nDATA ascii\n1 2 3\n4 5 6\n7 8 9\n')), 'pcd')).rejects.toThrow(
      'line 12: data continues after the 2 points declared in the header',
    )
  })
})
