import { Color, SRGBColorSpace } from 'three'
import { PLYLoader } from 'three/examples/jsm/loaders/PLYLoader.js'
import { describe, expect, it } from 'vitest'
import { ScanFormatError, detectFormat, readAll } from '../../../server/points/readers/index'
import { concatBytes, writePly, type PlyEncoding } from './lib/writers'
import { sampleCloud } from './lib/samples'

/** PLY (Turk 1994) checked against three.js's PLYLoader (three 0.187.0), an outside parser. */

function threeParse(bytes: Uint8Array) {
  const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer
  return new PLYLoader().parse(buffer)
}

/** PLYLoader turns sRGB colours to linear (three's ColorManagement); do the same to ours to compare. */
function toLinearByte(c: number): number {
  const color = new Color().setRGB(c / 255, 0, 0, SRGBColorSpace)
  return Math.round(color.r * 255)
}

describe('PLY against three PLYLoader', () => {
  const cloud = sampleCloud(40)
  // Irrational-looking values: ascii keeps all digits, PLYLoader rounds to float32.
  const positions = cloud.positions.map((v, i) => v + Math.sin(i) * 1e-3 + (i % 7) * 1234.5678)
  const source = { ...cloud, positions }

  for (const encoding of ['ascii', 'binary_little_endian', 'binary_big_endian'] as PlyEncoding[]) {
    it(`${encoding}: same positions (within float32), same colours after three's sRGB-to-linear step`, async () => {
      const bytes = writePly(source, encoding, { comments: ['invented test cloud'] })
      const ours = await readAll(bytes, 'ply')
      const theirs = threeParse(bytes)
      const p = theirs.getAttribute('position')
      expect(ours.count).toBe(40)
      expect(p.count).toBe(40)
      for (let i = 0; i < 40 * 3; i++) {
        // three keeps float32: our double rounded to float32 must be exactly its value.
        expect(Math.fround(ours.positions[i] as number)).toBe(p.array[i])
      }
      if (encoding !== 'ascii') {
        // Binary floats are float32 in the file: ours are exactly those values as doubles.
        for (let i = 0; i < 40 * 3; i++) expect(ours.positions[i]).toBe(p.array[i])
      } else {
        for (let i = 0; i < 40 * 3; i++) expect(ours.positions[i]).toBe(positions[i])
      }
      const c = theirs.getAttribute('color')
      for (let i = 0; i < 40 * 3; i++) {
        expect(Math.abs(toLinearByte(ours.colors![i] as number) - (c.array[i] as number))).toBeLessThanOrEqual(1)
        expect(ours.colors![i]).toBe(cloud.colors[i])
      }
      expect(Array.from(ours.intensities!)).toEqual(cloud.intensities)
      expect(ours.header.format === 'ply' && ours.header.comments).toEqual(['invented test cloud'])
    })
  }

  it('type aliases: char/uchar/short/ushort/int/uint/float/double and int8 ... float64 read alike', async () => {
    const classic = ['char', 'uchar', 'short', 'ushort', 'int', 'uint', 'float', 'double']
    const sized = ['int8', 'uint8', 'int16', 'uint16', 'int32', 'uint32', 'float32', 'float64']
    const values = [-7, 200, -30000, 60000, -2000000000, 4000000000, 1.5, 2.25]
    const files = [classic, sized].map((types) => {
      const header = ['ply', 'format binary_big_endian 1.0', 'element vertex 1']
      types.forEach((t, i) => header.push(`property ${t} p${i}`))
      header.push('property float x', 'property float y', 'property float z', 'end_header', '')
      const head = new TextEncoder().encode(header.join('\n'))
      const body = new Uint8Array(1 + 1 + 2 + 2 + 4 + 4 + 4 + 8 + 12)
      const v = new DataView(body.buffer)
      v.setInt8(0, values[0] as number)
      v.setUint8(1, values[1] as number)
      v.setInt16(2, values[2] as number)
      v.setUint16(4, values[3] as number)
      v.setInt32(6, values[4] as number)
      v.setUint32(10, values[5] as number)
      v.setFloat32(14, values[6] as number)
      v.setFloat64(18, values[7] as number)
      v.setFloat32(26, 1)
      v.setFloat32(30, 2)
      v.setFloat32(34, 3)
      return concatBytes([head, body])
    })
    for (const file of files) {
      const ours = await readAll(file, 'ply')
      expect(Array.from(ours.positions)).toEqual([1, 2, 3])
      // three reads the same types: a check that the record layout (and so every size) matched.
      const theirs = threeParse(file)
      expect(Array.from(theirs.getAttribute('position').array)).toEqual([1, 2, 3])
    }
  })

  it('faces after the vertices are skipped and the counts still checked', async () => {
    const bytes = writePly(sampleCloud(9), 'binary_little_endian')
    const ours = await readAll(bytes, 'ply')
    expect(ours.count).toBe(9)
    expect(threeParse(bytes).getIndex()?.count).toBe(9)
    // One face record short: the reader notices, although it does not use faces.
    await expect(readAll(bytes.subarray(0, bytes.length - 13), 'ply')).rejects.toThrow(
      /file ends after 2 of 3 face records declared in the header/,
    )
  })

  it('x, y or z missing, or no vertex element, is a header error', async () => {
    const noZ = new TextEncoder().encode('ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nend_header\n1 2\n')
    await expect(readAll(noZ, 'ply')).rejects.toThrow("header line 3: element vertex has no property 'z'")
    const noVertex = new TextEncoder().encode('ply\nformat ascii 1.0\nelement face 1\nproperty list uchar int idx\nend_header\n3 0 1 2\n')
    await expect(readAll(noVertex, 'ply')).rejects.toThrow(ScanFormatError)
  })

  it('ascii: wrong value counts name the line', async () => {
    const bytes = new TextEncoder().encode('ply\nformat ascii 1.0\nelement vertex 2\nproperty float x\nproperty float y\nproperty float z\nend_header\n1.5 2.5 3.5\n4.5 5.5\n')
    await expect(readAll(bytes, 'ply')).rejects.toThrow('line 9: expected 3 numbers (x y z), found 2')
  })

  // Turk's PLY description separates header words by whitespace; writers leave spaces or tabs at line ends.
  it('header lines with trailing spaces and tabs (ply, format, element, property, end_header) read right', async () => {
    const head = 'ply \t\r\nformat ascii 1.0  \ncomment made here\t\nelement vertex 3\t\nproperty float x \nproperty float y\t \nproperty float z  \nend_header \t\n'
    const bytes = new TextEncoder().encode(`${head}1.5 -2 3 \n-4 5.25 6\t\n7 8 -9.5  \n`)
    expect(detectFormat(bytes, 'trailing.ply')).toBe('ply')
    const cloud = await readAll(bytes, 'ply', { chunkSize: 7 })
    expect(cloud.count).toBe(3)
    expect(Array.from(cloud.positions)).toEqual([1.5, -2, 3, -4, 5.25, 6, 7, 8, -9.5])
    expect(cloud.summary.bounds).toEqual({ min: [-4, -2, -9.5], max: [7, 8, 6] })
  })

  it('binary body after an end_header line with trailing spaces starts at the byte after its newline', async () => {
    const head = new TextEncoder().encode('ply  \nformat binary_little_endian 1.0 \nelement vertex 2 \nproperty double x\t\nproperty double y \nproperty double z \nend_header  \n')
    const body = new Float64Array([0.125, 32, -1, 10, -20.5, 2.75])
    const bytes = concatBytes([head, new Uint8Array(body.buffer)])
    expect(detectFormat(bytes, 'trailing.ply')).toBe('ply')
    const cloud = await readAll(bytes, 'ply')
    expect(cloud.count).toBe(2)
    expect(Array.from(cloud.positions)).toEqual(Array.from(body))
    expect(cloud.summary.bounds).toEqual({ min: [0.125, -20.5, -1], max: [10, 32, 2.75] })
  })
})
