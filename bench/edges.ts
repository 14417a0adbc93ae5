// Coverage of the stated U for openings and clearances under point noise (GUM Supplement 1 manner, JCGM
// 101:2008): fixed-seed trials of a door 0.900 x 2.000 m with a box (0.60 m wide, 1.20 m tall) or a drum
// (0.60 m diameter) carried through it as they stand (margin 0.150 m, derived), at 10 and 20 mm spacing.
import { doorTrial, type TrialFigures } from '../tests/unit/measure/noisyScenes'

const TRUTH = { width: 0.9, height: 2.0, margin: 0.15 }

export interface EdgeBenchRow {
  noiseMm: number
  trials: number
  failed: number
  figures: Record<keyof TrialFigures, { coverage: number; meanMm: number; rmsMm: number; medianUMm: number }>
}

export function runEdgeBench(levelsMm = [1, 2, 5, 10, 20], trials = 200, log: (l: string) => void = () => {}): EdgeBenchRow[] {
  const rows: EdgeBenchRow[] = []
  for (const mm of levelsMm) {
    const noise = mm / 1000, done: TrialFigures[] = []
    let failed = 0
    for (let i = 0; i < trials; i++) {
      try {
        done.push(doorTrial({ w: 0.9, h: 2.0 }, i % 2 === 0 ? 'box' : 'drum', (i >> 1) % 2 === 0 ? 0.01 : 0.02, noise, 100_000 + 1000 * mm + i))
      } catch {
        failed++
      }
    }
    const figures = {} as EdgeBenchRow['figures']
    for (const key of ['width', 'height', 'margin'] as const) {
      const errors = done.map((t) => t[key].value - TRUTH[key])
      const Us = done.map((t) => t[key].U).sort((a, b) => a - b)
      figures[key] = {
        coverage: done.filter((t) => Math.abs(t[key].value - TRUTH[key]) <= t[key].U).length / Math.max(1, done.length),
        meanMm: (1000 * errors.reduce((a, b) => a + b, 0)) / Math.max(1, errors.length),
        rmsMm: 1000 * Math.sqrt(errors.reduce((a, b) => a + b * b, 0) / Math.max(1, errors.length)),
        medianUMm: 1000 * (Us[Us.length >> 1] ?? NaN),
      }
    }
    rows.push({ noiseMm: mm, trials, failed, figures })
    log(`edges: ${mm} mm done`)
  }
  return rows
}

export function formatEdgeBench(rows: EdgeBenchRow[]): string {
  const lines = ['| noise | figure | coverage of U (goal >= 91 %) | mean error | RMS error | median U | trials failed |', '|---|---|---|---|---|---|---|']
  for (const r of rows) {
    for (const key of ['width', 'height', 'margin'] as const) {
      const f = r.figures[key]
      lines.push(`| ${r.noiseMm} mm | ${key} | ${(f.coverage * 100).toFixed(1)} % | ${f.meanMm.toFixed(2)} mm | ${f.rmsMm.toFixed(2)} mm | ${f.medianUMm.toFixed(2)} mm | ${r.failed} of ${r.trials} |`)
    }
  }
  return lines.join('\n')
}
