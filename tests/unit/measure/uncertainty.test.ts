import { describe, expect, it } from 'vitest'
import {
  anchorBudget,
  combineInQuadrature,
  pickingUncertainty,
  rectangularUncertainty,
  registrationUncertainty,
} from '@shared/measure/uncertainty'
import { fitRigid } from '@shared/measure/registration'
import { mulberry32, normal, sampleStd, stdTolerance } from './random'

describe('anchor uncertainty budget', () => {
  it('gives a / sqrt(3) for a rectangular distribution of half-width a (published: GUM 4.3.7)', () => {
    expect(rectangularUncertainty(3)).toBeCloseTo(Math.sqrt(3), 15)
    expect(rectangularUncertainty(0.002)).toBeCloseTo(0.002 / Math.sqrt(3), 15)
  })

  it('matches the spread of uniform draws over one spacing (seeded Monte Carlo, GUM 4.3.7)', () => {
    const rand = mulberry32(7)
    const n = 50_000, spacing = 0.004
    const draws = new Float64Array(n)
    for (let i = 0; i < n; i++) draws[i] = (rand() - 0.5) * spacing
    const u = pickingUncertainty(spacing)
    expect(u).toBeCloseTo(spacing / Math.sqrt(12), 15)
    // Uniform: the std of s is smaller than the normal-case bound used here, so this is conservative.
    expect(Math.abs(sampleStd(draws) - u)).toBeLessThan(stdTolerance(u, n))
  })

  it('adds independent parts in quadrature and expands with k = 2 (published: JCGM 100 5.1 eq. 10, 6.2)', () => {
    const budget = combineInQuadrature([
      { name: 'point', u: 0.003 },
      { name: 'registration', u: 0.004 },
    ])
    expect(budget.ok).toBe(true)
    if (!budget.ok) return
    expect(budget.total).toBeCloseTo(0.005, 15) // 3-4-5, derived
    expect(budget.expanded).toBeCloseTo(0.01, 15)
    expect(budget.k).toBe(2)
    expect(budget.parts.map((p) => p.name)).toEqual(['point', 'registration'])
  })

  it('lists point, picking and registration for an anchor, picking as spacing / sqrt(12)', () => {
    const budget = anchorBudget({ point: 0.002, spacing: 0.006, registrationRms: 0.001 })
    expect(budget.ok).toBe(true)
    if (!budget.ok) return
    expect(budget.parts).toEqual([
      { name: 'point', u: 0.002 },
      { name: 'picking', u: 0.006 / Math.sqrt(12) },
      { name: 'registration', u: 0.001 },
    ])
    expect(budget.total).toBeCloseTo(Math.sqrt(0.002 ** 2 + 0.006 ** 2 / 12 + 0.001 ** 2), 15)
    const noReg = anchorBudget({ point: 0.002, spacing: 0 })
    expect(noReg.ok && noReg.parts.length).toBe(2)
    expect(noReg.ok && noReg.total).toBeCloseTo(0.002, 15)
  })

  it('refuses negative or non-finite parts instead of returning NaN', () => {
    expect(combineInQuadrature([{ name: 'point', u: -1 }])).toEqual({ ok: false, reason: 'invalid-part', part: 'point' })
    expect(combineInQuadrature([{ name: 'x', u: Number.NaN }])).toMatchObject({ ok: false, part: 'x' })
    expect(anchorBudget({ point: 0.001, spacing: Number.POSITIVE_INFINITY })).toMatchObject({ ok: false, part: 'picking' })
    expect(combineInQuadrature([], 0)).toMatchObject({ ok: false, reason: 'invalid-coverage-factor' })
    expect(combineInQuadrature([])).toMatchObject({ ok: true, total: 0 })
  })
})

describe('registration uncertainty from a registration RMS', () => {
  it('turns a 3D check-point RMS into a per-axis figure: RMS / sqrt(3) (derived: E|r|^2 = 3 s^2)', () => {
    expect(registrationUncertainty({ source: 'check-points', rms: 0.003, count: 2 })).toBeCloseTo(0.003 / Math.sqrt(3), 15)
    expect(registrationUncertainty({ source: 'icp', rms: 0.0014, count: 40_000 })).toBe(0.0014)
    expect(registrationUncertainty({ source: 'tie-points', rms: 0.002, count: 2 })).toBeNull()
    expect(registrationUncertainty({ source: 'tie-points', rms: Number.NaN, count: 5 })).toBeNull()
    expect(registrationUncertainty({ source: 'tie-points', rms: 0.002, count: 3 })).toBeCloseTo(0.002, 15)
  })

  it('recovers the per-axis noise of tie points from the fitted RMS, on average, with 3n - 6 degrees of freedom (seeded Monte Carlo; least squares as in JCGM 100 H.3)', () => {
    const rand = mulberry32(11)
    const gauss = normal(rand)
    const sigma = 0.002
    for (const n of [3, 4, 6, 12]) {
      let sumU2 = 0
      const trials = 3000
      for (let k = 0; k < trials; k++) {
        const pairs = Array.from({ length: n }, () => {
          const p = [10 * rand() - 5, 10 * rand() - 5, 3 * rand()]
          // Held = moving turned 30 degrees about z and moved, plus isotropic noise on the held side.
          const c = Math.cos(Math.PI / 6), s = Math.sin(Math.PI / 6)
          const h = [c * p[0]! - s * p[1]! + 2 + sigma * gauss(), s * p[0]! + c * p[1]! - 1 + sigma * gauss(), p[2]! + 0.5 + sigma * gauss()]
          return { moving: p, held: h }
        })
        const fit = fitRigid(pairs)
        if (!fit.ok) throw new Error(fit.message)
        const u = registrationUncertainty({ source: 'tie-points', rms: fit.rms, count: fit.count })!
        sumU2 += u * u
      }
      // E[sum |r|^2] = (3n - 6) sigma^2, so the mean of u^2 is sigma^2; its spread over 3000 trials is a few %.
      expect(Math.sqrt(sumU2 / trials) / sigma, `n = ${n}`).toBeGreaterThan(0.96)
      expect(Math.sqrt(sumU2 / trials) / sigma, `n = ${n}`).toBeLessThan(1.04)
    }
  })
})
