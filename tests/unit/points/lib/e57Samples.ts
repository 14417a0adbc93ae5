import type { E57FileSpec, E57ScanSpec } from './e57Writer'

/**
 * Three scans covering the field types and cases of ASTM E2807's point records, with the points each
 * should become (computed here from the standard's definitions, not by the reader):
 * - A: gridded, ScaledInteger coordinates of 14 and 10 bits, Integer intensity (12 bits) and colour (10 bits)
 *   scaled by their limits, cartesianInvalidState (2 bits), rowIndex/columnIndex (5 and 7 bits); pose: a
 *   quarter turn about +z and a translation; many small packets, an empty and an index packet.
 * - B: spherical, Float64 range and Float32 angles, sphericalInvalidState, Float32 intensity with limits;
 *   pose: a half turn about +x.
 * - C: a 42-bit ScaledInteger x, Float32 y and z, 8-bit colour without colorLimits (the fields' own range),
 *   a 0-bit Integer field; no pose.
 */

export interface ExpectedPoint {
  /** Record index in its scan. */
  record: number
  scan: number
  local: [number, number, number]
  world: [number, number, number]
  color?: [number, number, number]
  intensity?: number
  row?: number
  column?: number
}

const Q = Math.SQRT1_2

function rng(seed: number): () => number {
  let s = seed >>> 0
  return () => {
    s = (s * 1664525 + 1013904223) >>> 0
    return s / 2 ** 32
  }
}

export function sampleE57(counts = { a: 3000, b: 500, c: 400 }): { spec: E57FileSpec; expected: ExpectedPoint[]; dropped: { invalidState: number; directionOnly: number } } {
  const expected: ExpectedPoint[] = []
  const dropped = { invalidState: 0, directionOnly: 0 }
  const random = rng(57)

  // Scan A
  const a: E57ScanSpec = {
    name: 'north bay',
    rotation: [Q, 0, 0, Q],
    translation: [100, 200, 5],
    fields: [
      { name: 'cartesianX', type: 'scaled', min: -5000, max: 5000, scale: 0.001, offset: 10 },
      { name: 'cartesianY', type: 'scaled', min: -5000, max: 5000, scale: 0.001, offset: -3 },
      { name: 'cartesianZ', type: 'scaled', min: 0, max: 1000, scale: 0.002, offset: 0 },
      { name: 'cartesianInvalidState', type: 'integer', min: 0, max: 2 },
      { name: 'intensity', type: 'integer', min: 0, max: 4095 },
      { name: 'colorRed', type: 'integer', min: 0, max: 1023 },
      { name: 'colorGreen', type: 'integer', min: 0, max: 1023 },
      { name: 'colorBlue', type: 'integer', min: 0, max: 1023 },
      { name: 'rowIndex', type: 'integer', min: 0, max: 29 },
      { name: 'columnIndex', type: 'integer', min: 0, max: 99 },
    ],
    columns: Array.from({ length: 10 }, () => []),
    intensityLimits: [0, 4095],
    colorLimits: { red: [0, 1023], green: [0, 1023], blue: [0, 1023] },
    indexBounds: { rows: [0, 29], columns: [0, 99] },
    streamBytesPerPacket: 700,
    extraPackets: true,
  }
  for (let i = 0; i < counts.a; i++) {
    const raw = [Math.floor(random() * 10001) - 5000, Math.floor(random() * 10001) - 5000, Math.floor(random() * 1001)]
    const state = i % 97 === 5 ? 2 : i % 101 === 7 ? 1 : 0
    const intensity = Math.floor(random() * 4096)
    const rgb = [Math.floor(random() * 1024), Math.floor(random() * 1024), Math.floor(random() * 1024)]
    const row = Math.floor(i / 100) % 30
    const column = i % 100
    ;[raw[0], raw[1], raw[2], state, intensity, rgb[0], rgb[1], rgb[2], row, column].forEach((v, f) => a.columns[f]!.push(v!))
    if (state === 2) dropped.invalidState++
    if (state === 1) dropped.directionOnly++
    if (state !== 0) continue
    const x = raw[0]! * 0.001 + 10
    const y = raw[1]! * 0.001 - 3
    const z = raw[2]! * 0.002
    expected.push({
      scan: 0,
      record: i,
      local: [x, y, z],
      // A quarter turn about +z: (x, y) -> (-y, x).
      world: [-y + 100, x + 200, z + 5],
      intensity: (intensity / 4095) * 65535,
      color: rgb.map((c) => Math.round((c * 255) / 1023)) as [number, number, number],
      row,
      column,
    })
  }

  // Scan B
  const b: E57ScanSpec = {
    name: 'stair core',
    rotation: [0, 1, 0, 0],
    translation: [-1, 2, 3],
    fields: [
      { name: 'sphericalRange', type: 'float64' },
      { name: 'sphericalAzimuth', type: 'float32' },
      { name: 'sphericalElevation', type: 'float32' },
      { name: 'sphericalInvalidState', type: 'integer', min: 0, max: 2 },
      { name: 'intensity', type: 'float32', floatMin: 0, floatMax: 1 },
    ],
    columns: Array.from({ length: 5 }, () => []),
    intensityLimits: [0, 1],
    streamBytesPerPacket: 1500,
  }
  for (let i = 0; i < counts.b; i++) {
    const r = 1 + random() * 19
    const az = Math.fround(-Math.PI + random() * 2 * Math.PI)
    const el = Math.fround(-1.2 + random() * 2.4)
    const state = i % 50 === 3 ? 2 : 0
    const intensity = Math.fround(random())
    ;[r, az, el, state, intensity].forEach((v, f) => b.columns[f]!.push(v))
    if (state === 2) {
      dropped.invalidState++
      continue
    }
    const x = r * Math.cos(el) * Math.cos(az)
    const y = r * Math.cos(el) * Math.sin(az)
    const z = r * Math.sin(el)
    // A half turn about +x: (x, y, z) -> (x, -y, -z).
    expected.push({ scan: 1, record: i, local: [x, y, z], world: [x - 1, -y + 2, -z + 3], intensity: intensity * 65535 })
  }

  // Scan C
  const c: E57ScanSpec = {
    fields: [
      { name: 'cartesianX', type: 'scaled', min: -(2 ** 40), max: 2 ** 40, scale: 1e-9, offset: 0 },
      { name: 'cartesianY', type: 'float32' },
      { name: 'cartesianZ', type: 'float32' },
      { name: 'returnIndex', type: 'integer', min: 0, max: 0 },
      { name: 'colorRed', type: 'integer', min: 0, max: 255 },
      { name: 'colorGreen', type: 'integer', min: 0, max: 255 },
      { name: 'colorBlue', type: 'integer', min: 0, max: 255 },
    ],
    columns: Array.from({ length: 7 }, () => []),
    streamBytesPerPacket: 2000,
  }
  for (let i = 0; i < counts.c; i++) {
    const rawX = Math.floor((random() * 2 - 1) * 2 ** 40)
    const y = Math.fround(random() * 4 - 2)
    const z = Math.fround(random() * 3)
    const rgb = [Math.floor(random() * 256), Math.floor(random() * 256), Math.floor(random() * 256)]
    ;[rawX, y, z, 0, rgb[0]!, rgb[1]!, rgb[2]!].forEach((v, f) => c.columns[f]!.push(v))
    const x = rawX * 1e-9
    expected.push({ scan: 2, record: i, local: [x, y, z], world: [x, y, z], color: rgb as [number, number, number] })
  }
  return { spec: { scans: [a, b, c], images: 2 }, expected, dropped }
}
