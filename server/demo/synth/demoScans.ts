import { rotationZ } from '@shared/geometry/rigidTransform'
import { writeBinaryPly } from '../../points/writers/plyWriter'
import { CHEST, chestSurfaces, doorSurfaces } from './scene'
import { createRandom, gaussian, localPoint, rangeSigma, sweepStation, type Random, type Reading, type StationPose } from './stations'

/**
 * The demo's three scans, made from the invented scene with seeded noise so every run gives the same
 * files: station A of the loading door (binary PLY with intensity), station B of it (a station log with
 * five shots a reading) and the chest scanned on its own from four sides (binary PLY with colour). Each is
 * in its own station frame, as a scanner would deliver it.
 */
export const STATION_A: StationPose = { position: [-1.8, -4.0, 1.5], headingDeg: 66 }
export const STATION_B: StationPose = { position: [2.3, -3.4, 1.35], headingDeg: 112 }

/** The demo scene: where each scan is placed (column-major rigid matrices, scene frame = the site's). */
export const DEMO_SCENE = {
  name: 'West door and the chart chest',
  placements: [
    { fileName: 'west-door-station-A.ply', matrix: rotationZ(STATION_A.headingDeg, ...STATION_A.position) },
    // About 4 degrees and 20 cm from where station B stood: aligning it is part of the story.
    { fileName: 'west-door-station-B.log', matrix: rotationZ(STATION_B.headingDeg - 4, STATION_B.position[0] + 0.15, STATION_B.position[1] + 0.12, STATION_B.position[2]) },
    { fileName: 'chart-chest.ply', matrix: rotationZ(0, 0, -1.6, 0) },
  ],
}

export interface DemoScanFile {
  fileName: string
  name: string
  bytes: Buffer
}

function stationAPly(rng: Random): Buffer {
  const readings = sweepStation(doorSurfaces(), STATION_A, { panFromDeg: -42, panToDeg: 42, tiltFromDeg: -32, tiltToDeg: 42, stepDeg: 0.12 })
  const hits = readings.filter((r): r is Reading & { range: number } => r.range !== null && r.range < 40)
  const positions = new Float64Array(hits.length * 3)
  const intensities = new Float32Array(hits.length)
  hits.forEach((h, i) => {
    const r = h.range + gaussian(rng) * rangeSigma(h.range, h.cosIncidence, 0.0015)
    localPoint(h.panDeg, h.tiltDeg, r, positions, i * 3)
    intensities[i] = Math.round(2000 + 60000 * h.reflectance * h.cosIncidence * Math.min(1, 25 / (h.range * h.range)) + gaussian(rng) * 300)
  })
  return writeBinaryPly({ count: hits.length, positions, intensities }, ['Spanmark demo: loading door, station A (synthetic)'])
}

function stationBLog(rng: Random): Buffer {
  const readings = sweepStation(doorSurfaces(), STATION_B, { panFromDeg: -40, panToDeg: 40, tiltFromDeg: -30, tiltToDeg: 40, stepDeg: 0.16 })
  const shots = 5
  const lines = [
    '# spanmark-station-log 1',
    'station: yard-east',
    'position: 0 0 0',
    'heading: 0',
    'axis-offset: 0 0 0',
    'beam-offset: 0 0 0',
    'range-zero-offset: 0',
    'rated-range: 40',
    'laser-class: 1',
    `shots-per-reading: ${shots}`,
    'range-uncertainty: 0.003',
    'angular-uncertainty: 0.02',
    'instrument: two-axis head on a camera tripod (synthetic demo data)',
    '# pan tilt range samples (metres)',
  ]
  for (const r of readings) {
    const samples: string[] = []
    for (let s = 0; s < shots; s++) {
      // No return off the scene's edges, and now and then a lost shot on a dark or steep surface.
      if (r.range === null || rng() < 0.04 + 0.1 * (1 - r.cosIncidence)) samples.push('-')
      else samples.push((r.range + gaussian(rng) * rangeSigma(r.range, r.cosIncidence, 0.004)).toFixed(4))
    }
    lines.push(`${r.panDeg} ${r.tiltDeg} ${samples.join(' ')}`)
  }
  return Buffer.from(lines.join('\n') + '\n', 'utf8')
}

function chestPly(rng: Random): Buffer {
  const surfaces = chestSurfaces()
  const positions: number[] = []
  const colors: number[] = []
  const tmp = new Float64Array(3)
  // Four stations around the chest at 2.4 m, their points brought into the chest's frame (already registered).
  for (const [k, az] of [20, 110, 200, 290].entries()) {
    const a = (az * Math.PI) / 180
    const pose: StationPose = { position: [2.4 * Math.cos(a), 2.4 * Math.sin(a), 1.25 + 0.1 * k], headingDeg: az + 180 }
    const readings = sweepStation(surfaces, pose, { panFromDeg: -22, panToDeg: 22, tiltFromDeg: -32, tiltToDeg: -2, stepDeg: 0.16 })
    const ch = Math.cos((pose.headingDeg * Math.PI) / 180)
    const sh = Math.sin((pose.headingDeg * Math.PI) / 180)
    for (const r of readings) {
      if (r.range === null) continue
      localPoint(r.panDeg, r.tiltDeg, r.range + gaussian(rng) * rangeSigma(r.range, r.cosIncidence, 0.0012), tmp, 0)
      positions.push(ch * tmp[0]! - sh * tmp[1]! + pose.position[0], sh * tmp[0]! + ch * tmp[1]! + pose.position[1], tmp[2]! + pose.position[2])
      const grain = 1 + 0.12 * Math.sin(tmp[0]! * 90 + tmp[2]! * 7) + 0.05 * gaussian(rng)
      colors.push(...r.color.map((c) => Math.max(0, Math.min(255, Math.round(c * grain)))))
    }
  }
  return writeBinaryPly(
    { count: positions.length / 3, positions: Float64Array.from(positions), colors: Uint8Array.from(colors) },
    [`Spanmark demo: chart chest ${CHEST.length} x ${CHEST.depth} x ${CHEST.height} m (synthetic)`],
  )
}

export function demoScanFiles(seed = 20261201): DemoScanFile[] {
  const rng = createRandom(seed)
  return [
    { fileName: 'west-door-station-A.ply', name: 'West loading door, station A', bytes: stationAPly(rng) },
    { fileName: 'west-door-station-B.log', name: 'West loading door, station B (station log)', bytes: stationBLog(rng) },
    { fileName: 'chart-chest.ply', name: 'Chart chest', bytes: chestPly(rng) },
  ]
}
