import { PointBuffer } from '../../server/points/pointBuffer'
import { createRandom, gaussian, type Random } from '../../server/points/stats/random'

/**
 * Seeded synthetic scans that look like scans: two stations in a 12 x 9 x 3.2 m room with a column, rays
 * on a jittered pan/tilt grid in scan order hitting the walls, floor, ceiling and column, 1.5 mm range
 * noise, colour and intensity. Used by every bench, so files and in-memory figures describe the same data.
 */
const ROOM = { min: [0, 0, 0], max: [12, 9, 3.2] }
const COLUMN = { x: 7.5, y: 4, r: 0.25 }
const STATIONS: [number, number, number][] = [
  [3, 3, 1.6],
  [9.5, 6.5, 1.5],
]
const BATCH = 65536

/** Range from o along unit d to the room's walls or the column, whichever comes first. */
function cast(o: readonly number[], d: readonly number[]): number {
  let t = Infinity
  for (let a = 0; a < 3; a++) {
    if (d[a]! > 0) t = Math.min(t, (ROOM.max[a]! - o[a]!) / d[a]!)
    else if (d[a]! < 0) t = Math.min(t, (ROOM.min[a]! - o[a]!) / d[a]!)
  }
  // Vertical cylinder: |(o + t d)_xy - c|^2 = r^2.
  const ox = o[0]! - COLUMN.x, oy = o[1]! - COLUMN.y
  const a = d[0]! * d[0]! + d[1]! * d[1]!
  const b = 2 * (ox * d[0]! + oy * d[1]!)
  const c = ox * ox + oy * oy - COLUMN.r * COLUMN.r
  const disc = b * b - 4 * a * c
  if (a > 0 && disc >= 0) {
    const hit = (-b - Math.sqrt(disc)) / (2 * a)
    if (hit > 0 && hit < t) t = hit
  }
  return t
}

/** A synthetic scan of `count` points, fed to a PointBuffer in reader-sized batches. */
export function syntheticScan(count: number, seed = 1): PointBuffer {
  const random: Random = createRandom(seed)
  const buffer = new PointBuffer({ capacity: count })
  const perStation = Math.ceil(count / STATIONS.length)
  // Pan 360 degrees, tilt -60..+90 degrees, on a grid with as many cells as points per station.
  const tiltSpan = (150 * Math.PI) / 180
  const columns = Math.ceil(Math.sqrt((perStation * 2 * Math.PI) / tiltSpan))
  const rows = Math.ceil(perStation / columns)
  const batch = { count: 0, positions: new Float64Array(BATCH * 3), colors: new Uint8Array(BATCH * 3), intensities: new Float32Array(BATCH) }
  let made = 0
  const flush = () => {
    buffer.append({ ...batch, positions: batch.positions.subarray(0, batch.count * 3), colors: batch.colors.subarray(0, batch.count * 3), intensities: batch.intensities.subarray(0, batch.count) })
    batch.count = 0
  }
  for (const station of STATIONS) {
    for (let cell = 0; cell < perStation && made < count; cell++, made++) {
      const pan = ((cell % columns) + random()) * ((2 * Math.PI) / columns)
      const tilt = -Math.PI / 3 + (Math.floor(cell / columns) + random()) * (tiltSpan / rows)
      const d = [Math.cos(tilt) * Math.cos(pan), Math.cos(tilt) * Math.sin(pan), Math.sin(tilt)]
      const range = cast(station, d) + gaussian(random) * 0.0015
      const i = batch.count++
      for (let a = 0; a < 3; a++) batch.positions[3 * i + a] = station[a]! + range * d[a]!
      const shade = Math.min(255, 60 + Math.floor(range * 15))
      batch.colors.set([shade, shade, 200 - (shade >> 1)], 3 * i)
      batch.intensities[i] = 2000 + 30000 / (1 + range)
      if (batch.count === BATCH) flush()
    }
  }
  if (batch.count > 0) flush()
  return buffer
}

