// Coverage of the stated expanded uncertainty, by simulation in the manner of GUM Supplement 1 (JCGM
// 101:2008, published): fixed-seed trials of scans of known geometry (a door 0.900 x 2.000 m; a box 0.60 m
// wide and 1.20 m tall, and a drum of 0.60 m diameter, carried through it as they stand: margin 0.150 m a
// side, derived), at two point spacings; the fraction of trials whose truth lies within value +- U.
// With k = 2 the nominal coverage is 95.45 % (JCGM 100 Annex G); 88 % over 100 trials fails a calibrated
// method with negligible probability (binomial, derived). U must not be inflated (median U at most 2.5 x the
// trials' RMS error) and the mean error must stay within U / 2 (no bias: the extreme-point method was off by
// about three noise sigmas per edge, order statistics: expected maximum of n normal deviates).
import { describe, expect, test } from 'vitest'
import { doorTrial, type TrialFigures } from './noisyScenes'

const TRUTH = { width: 0.9, height: 2.0, margin: 0.15 }
const TRIALS = 100

function summary(trials: TrialFigures[], key: keyof TrialFigures) {
  const errors = trials.map((t) => t[key].value - TRUTH[key])
  const Us = trials.map((t) => t[key].U).sort((a, b) => a - b)
  const covered = trials.filter((t) => Math.abs(t[key].value - TRUTH[key]) <= t[key].U).length
  const mean = errors.reduce((a, b) => a + b, 0) / errors.length
  const rms = Math.sqrt(errors.reduce((a, b) => a + b * b, 0) / errors.length)
  return { coverage: covered / trials.length, mean, rms, medianU: Us[Us.length >> 1]! }
}

describe('edges fitted to the points: coverage of U by simulation', () => {
  for (const noise of [0.002, 0.005, 0.01]) {
    test(`${noise * 1000} mm point noise, ${TRIALS} trials`, () => {
      const trials: TrialFigures[] = []
      for (let i = 0; i < TRIALS; i++) {
        const object = i % 2 === 0 ? 'box' : 'drum'
        const spacing = (i >> 1) % 2 === 0 ? 0.02 : 0.03
        trials.push(doorTrial({ w: 0.9, h: 2.0 }, object, spacing, noise, 1000 * noise + 7 * i + 1))
      }
      for (const key of ['width', 'height', 'margin'] as const) {
        const s = summary(trials, key)
        const where = `${key} at ${noise * 1000} mm: coverage ${(s.coverage * 100).toFixed(0)} %, mean error ${(s.mean * 1000).toFixed(2)} mm, RMS ${(s.rms * 1000).toFixed(2)} mm, median U ${(s.medianU * 1000).toFixed(2)} mm`
        expect(s.coverage, where).toBeGreaterThanOrEqual(0.88)
        expect(s.medianU, where).toBeLessThanOrEqual(2.5 * s.rms)
        expect(Math.abs(s.mean), where).toBeLessThanOrEqual(s.medianU / 2)
      }
    }, 60_000)
  }
})
