import { execFileSync } from 'node:child_process'
import { mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { dirname, join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { writeE57, type E57ScanSpec } from '../tests/unit/points/lib/e57Writer'

/**
 * E57 read bench: synthetic files of two scans (Float32 x y z, 8-bit colour, 12-bit intensity, a pose
 * each) written with the test writer built from ASTM E2807, read in a fresh process through ranged reads
 * of the file. Peak RSS should stay flat as the file grows: the reader holds a window of pages.
 *
 *   npx tsx bench/e57.ts [--sizes 1e6,5e6]
 */

export interface E57BenchRow {
  points: number
  megabytes: number
  seconds: number
  pointsPerSecond: number
  peakRssMiB: number
}

const here = dirname(fileURLToPath(import.meta.url))

function scan(points: number, seed: number, translation: [number, number, number]): E57ScanSpec {
  const x: number[] = []
  const y: number[] = []
  const z: number[] = []
  const r: number[] = []
  const g: number[] = []
  const b: number[] = []
  const intensity: number[] = []
  let s = seed
  for (let i = 0; i < points; i++) {
    s = (s * 1664525 + 1013904223) >>> 0
    x.push(Math.fround((i % 1000) * 0.01))
    y.push(Math.fround(Math.floor(i / 1000) * 0.01))
    z.push(Math.fround((s / 2 ** 32) * 0.01))
    r.push(s & 0xff)
    g.push((s >>> 8) & 0xff)
    b.push((s >>> 16) & 0xff)
    intensity.push((s >>> 20) & 0xfff)
  }
  return {
    rotation: [Math.SQRT1_2, 0, 0, Math.SQRT1_2],
    translation,
    fields: [
      { name: 'cartesianX', type: 'float32' },
      { name: 'cartesianY', type: 'float32' },
      { name: 'cartesianZ', type: 'float32' },
      { name: 'colorRed', type: 'integer', min: 0, max: 255 },
      { name: 'colorGreen', type: 'integer', min: 0, max: 255 },
      { name: 'colorBlue', type: 'integer', min: 0, max: 255 },
      { name: 'intensity', type: 'integer', min: 0, max: 4095 },
    ],
    columns: [x, y, z, r, g, b, intensity],
    intensityLimits: [0, 4095],
    recordsPerPacket: 2000,
  }
}

export function runE57Bench(sizes: number[], log: (line: string) => void = () => {}): E57BenchRow[] {
  const dir = mkdtempSync(join(tmpdir(), 'spanmark-e57-bench-'))
  const rows: E57BenchRow[] = []
  try {
    for (const points of sizes) {
      const path = join(dir, `bench-${points}.e57`)
      const half = Math.floor(points / 2)
      writeFileSync(path, writeE57({ scans: [scan(half, 1, [0, 0, 0]), scan(points - half, 2, [12, 3, 0])] }).bytes)
      const megabytes = statSync(path).size / 1e6
      log(`e57: ${points} points, ${megabytes.toFixed(0)} MB written; reading`)
      const out = execFileSync(process.execPath, ['--import', 'tsx', join(here, 'lib', 'e57Job.ts'), path], { cwd: join(here, '..'), encoding: 'utf8' })
      const job = JSON.parse(out.trim().split('\n').pop()!) as { points: number; seconds: number; peakRssMiB: number }
      if (job.points !== points) throw new Error(`read ${job.points} points of ${points}`)
      rows.push({ points, megabytes, seconds: job.seconds, pointsPerSecond: points / job.seconds, peakRssMiB: job.peakRssMiB })
      rmSync(path)
    }
  } finally {
    rmSync(dir, { recursive: true, force: true })
  }
  return rows
}

export function formatE57Bench(rows: E57BenchRow[]): string {
  return rows
    .map((r) => `${(r.points / 1e6).toFixed(1)} M points (${r.megabytes.toFixed(0)} MB): ${r.seconds.toFixed(2)} s, ${(r.pointsPerSecond / 1e6).toFixed(2)} M points/s, peak RSS ${r.peakRssMiB.toFixed(0)} MiB`)
    .join('\n')
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const at = process.argv.indexOf('--sizes')
  const sizes = (at >= 0 ? process.argv[at + 1]! : '1e6,5e6').split(',').map(Number)
  process.stdout.write(`${formatE57Bench(runE57Bench(sizes, (l) => process.stderr.write(`${l}\n`)))}\n`)
}
