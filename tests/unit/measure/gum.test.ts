import { describe, expect, it } from 'vitest'
import { propagate } from '@shared/measure/gum'

// End-gauge calibration, JCGM 100:2008 Annex H.1 (published): l = 50.000838 mm, u_c = 32 nm; the
// first-order recomputation is about 31.7 nm (our own recomputation of JCGM 100:2008 Annex H.1, allow 1 nm). The input estimates and
// uncertainties are from memory (the checked figures above do not list them): l_s = 50.000623 mm (u 25 nm), d = 215 nm
// (u 9.7 nm), alpha_s = 11.5e-6 /degC (u 1.2e-6), theta = -0.1 degC (u 0.41), delta_alpha = 0 (u 0.58e-6),
// delta_theta = 0 (u 0.029 degC). Model: l = l_s + d - l_s (delta_alpha theta + alpha_s delta_theta).
// That these reproduce both published values is the check that the recalled inputs are right.
const nm = 1e-6 // in mm
const endGauge = (x: Float64Array) => {
  const [ls, d, alphaS, theta, dAlpha, dTheta] = x as unknown as [number, number, number, number, number, number]
  return ls + d - ls * (dAlpha * theta + alphaS * dTheta)
}
const estimates = [50.000623, 215 * nm, 11.5e-6, -0.1, 0, 0]
const uncertainties = [25 * nm, 9.7 * nm, 1.2e-6, 0.41, 0.58e-6, 0.029]

describe('first-order propagation by numerical sensitivities', () => {
  it('reproduces the GUM end-gauge example (published: JCGM 100 Annex H.1)', () => {
    const r = propagate(endGauge, estimates, uncertainties)
    expect(r.ok).toBe(true)
    if (!r.ok) return
    expect(r.value).toBeCloseTo(50.000838, 9)
    expect(Math.abs(r.u / nm - 31.7)).toBeLessThan(1)
    expect(Math.round(r.u / nm)).toBe(32)
    // Sensitivities at the estimates (GUM H.1.3, derived from the model): c_ls = 1, c_d = 1,
    // c_alpha_s = -l_s delta_theta = 0, c_theta = -l_s delta_alpha = 0, c_delta_alpha = -l_s theta,
    // c_delta_theta = -l_s alpha_s.
    expect(r.sensitivities[0]).toBeCloseTo(1, 9)
    expect(r.sensitivities[1]).toBeCloseTo(1, 9)
    expect(Math.abs(r.sensitivities[2]!)).toBeLessThan(1e-9)
    expect(Math.abs(r.sensitivities[3]!)).toBeLessThan(1e-12)
    expect(r.sensitivities[4]).toBeCloseTo(-50.000623 * -0.1, 6)
    expect(r.sensitivities[5]! / (-50.000623 * 11.5e-6)).toBeCloseTo(1, 9)
  })

  it('is exact for a quadratic model (central differences; derived: y = x^2, c = 2x)', () => {
    const r = propagate((x) => x[0]! * x[0]!, [3], [0.5])
    expect(r.ok && r.sensitivities[0]).toBeCloseTo(6, 12)
    expect(r.ok && r.u).toBeCloseTo(3, 12)
  })

  it('skips zero uncertainties and refuses bad input', () => {
    let calls = 0
    const r = propagate((x) => (calls++, x[0]! + x[1]!), [1, 2], [0, 0.1])
    expect(calls).toBe(3)
    expect(r.ok && r.u).toBeCloseTo(0.1, 15)
    expect(propagate((x) => x[0]!, [1], [1, 2])).toMatchObject({ ok: false, reason: 'size-mismatch' })
    expect(propagate((x) => x[0]!, [1], [-1])).toMatchObject({ ok: false, reason: 'invalid-uncertainty', index: 0 })
    expect(propagate((x) => Math.sqrt(x[0]!), [0], [1])).toMatchObject({ ok: false, reason: 'not-finite', index: 0 })
  })
})
