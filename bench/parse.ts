import { execFileSync } from 'node:child_process'
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { dirname, join } from 'node:path'
import { fileURLToPath, pathToFileURL } from 'node:url'
import type { JobResult } from './lib/parseJob'
import { writeSyntheticLas, writeSyntheticPly, writeSyntheticXyz } from './lib/syntheticScans'

/**
 * Parse bench: synthetic binary PLY (LE), LAS 1.2 format 0, LAS 1.4 format 6 and ASCII XYZ files of the
 * given sizes are written to a temporary folder; each is then read by Spanmark's streaming reader (1 MiB
 * chunks from disk) and, for PLY and LAS, by the reference parser on the whole buffer (three's PLYLoader,
 * @loaders.gl/las), each in a fresh process so its peak RSS is its own.
 *
 *   npx tsx bench/parse.ts [--sizes 1e6,1e7]
 *
 * Targets (DEVELOPERS.md, "Targets"): binary PLY and LAS at least 15 M points/s and at least 10x PLYLoader.
 */

export interface ParseBenchRow {
  file: string
  points: number
  megabytes: number
  parser: string
  seconds: number
  pointsPerSecond: number
  peakRssMiB: number
  /** Spanmark's rate over this row's reference parser (Spanmark rows that have one). */
  speedup: number | null
}

const here = dirname(fileURLToPath(import.meta.url))
const root = join(here, '..')

function runJob(kind: string, path: string): JobResult {
  const out = execFileSync(process.execPath, ['--import', 'tsx', join(here, 'lib', 'parseJob.ts'), kind, path], {
    cwd: root,
    encoding: 'utf8',
    maxBuffer: 1 << 20,
    env: { ...process.env, NODE_OPTIONS: `${process.env.NODE_OPTIONS ?? ''} --max-old-space-size=8192`.trim() },
  })
  const last = out.trim().split('\n').pop() ?? ''
  return JSON.parse(last) as JobResult
}

interface Case {
  name: string
  write: (path: string, points: number) => number
  reference: string | null
  referenceName: string
}

const CASES: Case[] = [
  { name: 'ply', write: writeSyntheticPly, reference: 'three-ply', referenceName: "three's PLYLoader" },
  { name: 'las', write: (p, n) => writeSyntheticLas(p, n, '1.2'), reference: 'loaders-las', referenceName: '@loaders.gl LASLoader' },
  { name: 'las', write: (p, n) => writeSyntheticLas(p, n, '1.4'), reference: 'loaders-las', referenceName: '@loaders.gl LAZRsLoader' },
  { name: 'xyz', write: writeSyntheticXyz, reference: null, referenceName: '' },
]

const LABEL = ['binary PLY LE', 'LAS 1.2 fmt 0', 'LAS 1.4 fmt 6', 'ASCII XYZ']

export function runParseBench(sizes: number[], log: (line: string) => void = () => {}): ParseBenchRow[] {
  const folder = mkdtempSync(join(tmpdir(), 'spanmark-parse-bench-'))
  const rows: ParseBenchRow[] = []
  try {
    for (const points of sizes) {
      CASES.forEach((c, index) => {
        const label = `${LABEL[index]}, ${formatCount(points)}`
        const path = join(folder, `bench-${index}-${points}.${c.name}`)
        const bytes = c.write(path, points)
        const megabytes = bytes / 1e6
        log(`${label}: ${megabytes.toFixed(0)} MB written, reading...`)
        const ours = runJob('spanmark', path)
        if (ours.points !== points) throw new Error(`${label}: read ${ours.points} points, wrote ${points}`)
        const oursRow: ParseBenchRow = {
          file: label,
          points,
          megabytes,
          parser: 'Spanmark reader',
          seconds: ours.seconds,
          pointsPerSecond: points / ours.seconds,
          peakRssMiB: ours.peakRssMiB,
          speedup: null,
        }
        rows.push(oursRow)
        if (c.reference) {
          const theirs = runJob(c.reference, path)
          oursRow.speedup = theirs.seconds / ours.seconds
          rows.push({
            file: label,
            points,
            megabytes,
            parser: c.referenceName,
            seconds: theirs.seconds,
            pointsPerSecond: theirs.points / theirs.seconds,
            peakRssMiB: theirs.peakRssMiB,
            speedup: null,
          })
        }
        rmSync(path, { force: true })
      })
    }
  } finally {
    rmSync(folder, { recursive: true, force: true })
  }
  return rows
}

export function formatParseBench(rows: ParseBenchRow[]): string {
  const head = ['file', 'MB', 'parser', 's', 'M points/s', 'peak RSS MiB', 'ratio']
  const body = rows.map((r) => [
    r.file,
    r.megabytes.toFixed(0),
    r.parser,
    r.seconds.toFixed(3),
    (r.pointsPerSecond / 1e6).toFixed(2),
    r.peakRssMiB.toFixed(0),
    r.speedup === null ? '' : `${r.speedup.toFixed(1)}x`,
  ])
  const widths = head.map((h, i) => Math.max(h.length, ...body.map((b) => (b[i] as string).length)))
  const line = (cells: string[]) => cells.map((c, i) => c.padEnd(widths[i] as number)).join('  ')
  return [line(head), line(widths.map((w) => '-'.repeat(w))), ...body.map(line)].join('\n')
}

function formatCount(n: number): string {
  return n >= 1e6 ? `${n / 1e6} M` : n >= 1e3 ? `${n / 1e3} k` : String(n)
}

function parseSizes(argv: string[]): number[] {
  const at = argv.indexOf('--sizes')
  const text = at >= 0 ? argv[at + 1] : argv.find((a) => a.startsWith('--sizes='))?.slice(8)
  const sizes = (text ?? '1e6,1e7').split(',').map(Number)
  if (sizes.some((n) => !Number.isInteger(n) || n <= 0)) throw new Error(`--sizes wants whole numbers, got '${text}'`)
  return sizes
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  const rows = runParseBench(parseSizes(process.argv.slice(2)), (l) => process.stderr.write(`${l}\n`))
  process.stdout.write(`${formatParseBench(rows)}\n`)
}
