import { concatBytes, type TestCloud } from './writers'

/** Invented sample data for reader tests (no meaning beyond exercising the formats). */

export interface SampleCloud {
  positions: number[]
  colors: number[]
  intensities: number[]
  faces: number[]
}

export function sampleCloud(n = 23): SampleCloud {
  const positions: number[] = []
  const colors: number[] = []
  const intensities: number[] = []
  for (let i = 0; i < n; i++) {
    // Values exact in float32, so binary and ascii files hold the same numbers.
    positions.push(i * 0.25 - 2, 10 - i * 0.5, (i % 5) * 0.125 + 0.0625)
    colors.push((i * 37) % 256, (i * 91) % 256, 255 - ((i * 13) % 256))
    intensities.push(i * 3 + 0.5)
  }
  const faces: number[] = []
  for (let i = 0; i + 2 < n; i += 3) faces.push(i, i + 1, i + 2)
  return { positions, colors, intensities, faces }
}

/**
 * A binary little-endian PLY whose vertex element has a list property between y and z, so its records
 * have no fixed length (Turk 1994 allows lists in any element).
 */
export function plyWithVertexList(cloud: TestCloud): Uint8Array {
  const n = cloud.positions.length / 3
  const header = new TextEncoder().encode(
    [
      'ply',
      'format binary_little_endian 1.0',
      `element vertex ${n}`,
      'property double x',
      'property double y',
      'property list uchar ushort tags',
      'property double z',
      'property ushort red',
      'property ushort green',
      'property ushort blue',
      'end_header',
      '',
    ].join('\n'),
  )
  const parts: Uint8Array[] = [header]
  for (let i = 0; i < n; i++) {
    const tags = i % 4
    const record = new Uint8Array(8 + 8 + 1 + tags * 2 + 8 + 6)
    const view = new DataView(record.buffer)
    view.setFloat64(0, cloud.positions[i * 3] as number, true)
    view.setFloat64(8, cloud.positions[i * 3 + 1] as number, true)
    view.setUint8(16, tags)
    for (let t = 0; t < tags; t++) view.setUint16(17 + t * 2, 1000 + t, true)
    const at = 17 + tags * 2
    view.setFloat64(at, cloud.positions[i * 3 + 2] as number, true)
    for (let k = 0; k < 3; k++) view.setUint16(at + 8 + k * 2, ((cloud.colors?.[i * 3 + k] ?? 0) << 8) | 0x7f, true)
    parts.push(record)
  }
  return concatBytes(parts)
}

export const SAMPLE_STATION_LOG = `# spanmark-station-log 1
# invented test data: a bench head in a workshop
station: bay-3
position: 1.5 -2.0 0.75
heading: 30
axis-offset: 0.01 0 0.035
beam-offset: 0.012 0.003 -0.004
range-zero-offset: 0.002
rated-range: 40
laser-class: 2M
shots-per-reading: 4
min-valid-samples: 2
range-uncertainty: 0.005
angular-uncertainty: 0.1
# pan tilt samples
0 0 5.000 5.002 4.998 5.000
45.5 -10 7.1, 7.12, 7.11, 7.09
90 10 3.3 - 3.31 nan
120 0 - - 2.0 -
-30 80 45.0 45.1 45.0 44.9
200.25 -89.5 1.234 1.236 1.235 1.233
`
