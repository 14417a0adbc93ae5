import { rotationZ } from '@shared/geometry/rigidTransform'
import { writeBinaryPly } from '../../points/writers/plyWriter'
import type { Surface } from './raycast'
import { CHEST, TROLLEY, yardSurfaces } from './scene'
import { createRandom, gaussian, localPoint, rangeSigma, sweepStation, type MixedPixels, type Random, type Reading, type StationPose } from './stations'

/**
 * The demo's four scans, made from the invented yard with seeded noise so every run gives the same files:
 * station A of the loading door (binary PLY with intensity; it also sees the chest on its trolley, to the
 * right of the door), station B of it (a station log with five shots a reading), and the chest on its
 * trolley from a front and a back station (binary PLY with colour), each seeing the floor round it. Each is
 * in its own station frame, as a scanner would deliver it. A and the chest's stations have mixed pixels at
 * edges (stations.ts, MixedPixels); B's log is left without them, as it was, for the alignment part of the demo.
 */
export const STATION_A: StationPose = { position: [-1.8, -4.0, 1.5], headingDeg: 66 }
export const STATION_B: StationPose = { position: [2.3, -3.4, 1.35], headingDeg: 112 }
/** The chest's stations: from the yard (south-east of it: its front and east end) and from between it and the wall (its back and west end). */
export const CHEST_FRONT: StationPose = { position: [3.16, -3.06, 1.3], headingDeg: 135 }
export const CHEST_BACK: StationPose = { position: [0.3, -0.75, 1.2], headingDeg: -30 }

/** Mixed pixels of the demo's phase-based units: a 3 mm beam, 0.3 mrad divergence, a quarter of edge readings. */
const MIXED = { fraction: 0.25, exitDiameter: 0.003, divergence: 0.0003 } as const

/** The demo scene: where each scan is placed (column-major rigid matrices, scene frame = the site's). */
export const DEMO_SCENE = {
  name: 'West door and the chart chest',
  /** Every station placed where it stood, but B (about 4 degrees and 20 cm off: aligning it is part of the story). */
  placements: [
    { fileName: 'west-door-station-A.ply', matrix: rotationZ(STATION_A.headingDeg, ...STATION_A.position) },
    // About 4 degrees and 20 cm from where station B stood: aligning it is part of the story.
    { fileName: 'west-door-station-B.log', matrix: rotationZ(STATION_B.headingDeg - 4, STATION_B.position[0] + 0.15, STATION_B.position[1] + 0.12, STATION_B.position[2]) },
    { fileName: 'chart-chest-front.ply', matrix: rotationZ(CHEST_FRONT.headingDeg, ...CHEST_FRONT.position) },
    { fileName: 'chart-chest-back.ply', matrix: rotationZ(CHEST_BACK.headingDeg, ...CHEST_BACK.position) },
  ],
}

export interface DemoScanFile {
  fileName: string
  name: string
  bytes: Buffer
}

function stationAPly(yard: readonly Surface[], rng: Random): Buffer {
  const readings = sweepStation(yard, STATION_A, { panFromDeg: -42, panToDeg: 42, tiltFromDeg: -32, tiltToDeg: 42, stepDeg: 0.12 }, { ...MIXED, random: rng })
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

function stationBLog(yard: readonly Surface[], rng: Random): Buffer {
  const readings = sweepStation(yard, STATION_B, { panFromDeg: -40, panToDeg: 40, tiltFromDeg: -30, tiltToDeg: 40, stepDeg: 0.16 })
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

/** One of the chest's stations: a short sweep down onto the chest and the floor round it, with colour. */
function chestStationPly(yard: readonly Surface[], pose: StationPose, sweep: Parameters<typeof sweepStation>[2], which: string, rng: Random): Buffer {
  const readings = sweepStation(yard, pose, sweep, { ...MIXED, random: rng })
  const hits = readings.filter((r): r is Reading & { range: number } => r.range !== null && r.range < 40)
  const positions = new Float64Array(hits.length * 3)
  const colors = new Uint8Array(hits.length * 3)
  hits.forEach((h, i) => {
    localPoint(h.panDeg, h.tiltDeg, h.range + gaussian(rng) * rangeSigma(h.range, h.cosIncidence, 0.0012), positions, i * 3)
    const grain = 1 + 0.12 * Math.sin(positions[i * 3]! * 90 + positions[i * 3 + 2]! * 7) + 0.05 * gaussian(rng)
    for (let c = 0; c < 3; c++) colors[i * 3 + c] = Math.max(0, Math.min(255, Math.round(h.color[c]! * grain)))
  })
  return writeBinaryPly({ count: hits.length, positions, colors }, [
    `Spanmark demo: chart chest ${CHEST.length} x ${CHEST.depth} x ${CHEST.height} m on a trolley ${TROLLEY.height} m high, ${which} station (synthetic)`,
  ])
}

export function demoScanFiles(seed = 20261201): DemoScanFile[] {
  const rng = createRandom(seed)
  const yard = yardSurfaces()
  return [
    { fileName: 'west-door-station-A.ply', name: 'West loading door, station A', bytes: stationAPly(yard, rng) },
    { fileName: 'west-door-station-B.log', name: 'West loading door, station B (station log)', bytes: stationBLog(yard, rng) },
    {
      fileName: 'chart-chest-front.ply',
      name: 'Chart chest, front station',
      bytes: chestStationPly(yard, CHEST_FRONT, { panFromDeg: -26, panToDeg: 26, tiltFromDeg: -42, tiltToDeg: -4, stepDeg: 0.2 }, 'front', rng),
    },
    {
      fileName: 'chart-chest-back.ply',
      name: 'Chart chest, back station',
      bytes: chestStationPly(yard, CHEST_BACK, { panFromDeg: -34, panToDeg: 34, tiltFromDeg: -56, tiltToDeg: -6, stepDeg: 0.25 }, 'back', rng),
    },
  ]
}
