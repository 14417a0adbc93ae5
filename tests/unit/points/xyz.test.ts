import { describe, expect, it } from 'vitest'
import { readAll, type TextColumnsHeaderInfo } from '../../../server/points/readers/index'

/**
 * ASCII columns have no standard (server/points/readers/README.md: the user declares column order, delimiter and
 * units). The reference here is a plain split-and-Number() parse by the JavaScript engine of the same
 * lines; the rules the reader adds (delimiter and header detection) are this project's own.
 */

const encode = (s: string) => new TextEncoder().encode(s)

function reference(text: string, delimiter: RegExp): number[][] {
  return text
    .split('\n')
    .map((l) => l.trim())
    .filter((l) => l && !l.startsWith('#') && !l.startsWith('//') && !/[a-df-z]/i.test(l))
    .map((l) => l.split(delimiter).map(Number))
}

const ROWS = [
  [1.5, -2.25, 1e-3, 10, 20, 30, 0.5],
  [-0.001, 1234.5678, -3e2, 255, 0, 128, 12],
  [0.1, 0.2, 0.3, 1, 2, 3, 99.75],
]

describe('XYZ / CSV / TXT', () => {
  for (const [name, delimiter, split] of [
    ['spaces', '  ', / +/],
    ['tab', '\t', /\t/],
    ['comma', ',', /,/],
    ['semicolon', ';', /;/],
  ] as const) {
    it(`${name}-delimited x y z r g b intensity agree with a split-and-Number() parse`, async () => {
      const text = ROWS.map((r) => r.join(delimiter)).join('\n') + '\n'
      const cloud = await readAll(encode(text), 'xyz')
      const expected = reference(text, split)
      expect(cloud.count).toBe(3)
      expected.forEach((row, i) => {
        expect(Array.from(cloud.positions.subarray(i * 3, i * 3 + 3))).toEqual(row.slice(0, 3))
        expect(Array.from(cloud.colors!.subarray(i * 3, i * 3 + 3))).toEqual(row.slice(3, 6))
        expect(cloud.intensities![i]).toBe(Math.fround(row[6]!))
      })
      expect((cloud.header as TextColumnsHeaderInfo).delimiter).toBe(name === 'spaces' ? 'space' : name)
    })
  }

  it('a header row names the columns in any order; unknown columns, even text, are carried', async () => {
    const text = 'Z;label;X;Y;Intensity\n3,5;north;1,25;-2;7\n0;south;1;2;8\n'
    const cloud = await readAll(encode(text), 'xyz')
    expect(Array.from(cloud.positions)).toEqual([1.25, -2, 3.5, 1, 2, 0])
    expect(Array.from(cloud.intensities!)).toEqual([7, 8])
    const header = cloud.header as TextColumnsHeaderInfo
    expect(header.headerRow).toBe(true)
    expect(header.decimalComma).toBe(true)
    expect(header.columns).toEqual(['z', '', 'x', 'y', 'intensity'])
  })

  it('waits for a line with a decimal mark before choosing it (whole numbers first)', async () => {
    // Common practice, no source: spreadsheets in comma-decimal locales write ';' columns and '0,5'.
    const withHeader = await readAll(encode('x;y;z\n0;0;0\n0,5;0;0\n0;0,25;1\n'), 'xyz')
    expect(Array.from(withHeader.positions)).toEqual([0, 0, 0, 0.5, 0, 0, 0, 0.25, 1])
    expect((withHeader.header as TextColumnsHeaderInfo).decimalComma).toBe(true)
    const bare = await readAll(encode('1;2;3\n1,5;2;3\n'), 'xyz')
    expect(Array.from(bare.positions)).toEqual([1, 2, 3, 1.5, 2, 3])
    const dots = await readAll(encode('1;2;3\n1.5;2;3\n'), 'xyz')
    expect(Array.from(dots.positions)).toEqual([1, 2, 3, 1.5, 2, 3])
  })

  it('column counts without a header: 3 = xyz, 4 = + intensity, 6 = + rgb, 7 = + rgb intensity; 5 needs a header', async () => {
    expect((await readAll(encode('1 2 3 9\n'), 'xyz')).intensities?.[0]).toBe(9)
    expect(Array.from((await readAll(encode('1 2 3 9 8 7\n'), 'xyz')).colors!)).toEqual([9, 8, 7])
    await expect(readAll(encode('1 2 3 4 5\n'), 'xyz')).rejects.toThrow('line 1: 5 columns: add a header row')
  })

  it('comments, blank lines, a BOM and CRLF; errors count every line', async () => {
    const text = '\uFEFF# exported by a test\r\n\r\n// x y z\r\n1 2 3\r\n\r\n4 5 6\r\n7 8\r\n'
    await expect(readAll(encode(text), 'xyz')).rejects.toThrow('line 7: expected 3 numbers (x y z), found 2')
    const ok = await readAll(encode(text.replace('7 8\r\n', '')), 'xyz')
    expect(Array.from(ok.positions)).toEqual([1, 2, 3, 4, 5, 6])
  })

  it('a trailing delimiter is not a column; an empty middle one is an error', async () => {
    expect((await readAll(encode('1,2,3,\n4,5,6,\n'), 'xyz')).count).toBe(2)
    await expect(readAll(encode('1,2,3\n4,,6\n'), 'xyz')).rejects.toThrow('line 2: column 2 (y) is empty')
  })

  it('bad values name the line and the column', async () => {
    await expect(readAll(encode('1 2 3\n1 2q 3\n'), 'xyz')).rejects.toThrow("line 2: '2q' is not a number (column 2, y)")
    await expect(readAll(encode('1 2 3 0 0 300\n'), 'xyz')).rejects.toThrow('line 1: colour value 300 (b) is outside 0-255')
    await expect(readAll(encode('1 2 3\n1 nan 3\n'), 'xyz')).rejects.toThrow(
      'line 2: point 2 has a coordinate that is not a finite number (y = NaN)',
    )
    await expect(readAll(encode('1 2 3\n1 2 1e999\n'), 'xyz')).rejects.toThrow('(z = Infinity)')
  })
})

describe('XYZ header variants', () => {
  it('units in the header names, and a header row written as a // comment', async () => {
    const units = await readAll(encode('X [m];Y [m];Z (m);Intensity\n1;2;3;4\n'), 'xyz')
    expect(Array.from(units.positions)).toEqual([1, 2, 3])
    expect(Array.from(units.intensities!)).toEqual([4])
    const commented = await readAll(encode('//X,Y,Z,Nx,Ny,Nz,R,G,B\n1,2,3,0,0,1,10,20,30\n'), 'xyz')
    expect(Array.from(commented.positions)).toEqual([1, 2, 3])
    expect(Array.from(commented.colors!)).toEqual([10, 20, 30])
  })
})
