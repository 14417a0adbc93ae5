/**
 * First-order propagation of uncertainty for a scalar model y = f(x_1..x_n) with uncorrelated inputs
 * (JCGM 100:2008 section 5.1.2, eq. 10): u_c^2(y) = sum (c_i u(x_i))^2, c_i = df/dx_i at the estimates.
 *
 * The sensitivity coefficients are central differences c_i = (f(x + h_i e_i) - f(x - h_i e_i)) / (2 h_i)
 * with the step h_i = stepFactor * u(x_i) (default 1: the scale over which the input actually varies, as in
 * Kragten's spreadsheet method, here made symmetric so a quadratic term does not bias c_i). Inputs with
 * u = 0 contribute nothing and f is not evaluated for them. Units are those of the model.
 *
 * Degenerate input: mismatched lengths, a negative or non-finite uncertainty, or a model that returns a
 * non-finite value give { ok: false }, never NaN. Higher-order terms (GUM 5.1.2 note, eq. 14) are not
 * included: for strongly non-linear models compare with a Monte Carlo run (JCGM 101).
 */

export type Propagation =
  | { ok: true; value: number; u: number; sensitivities: Float64Array; contributions: Float64Array }
  | { ok: false; reason: 'size-mismatch' | 'invalid-uncertainty' | 'not-finite'; index: number }

export function propagate(
  f: (x: Float64Array) => number,
  estimates: ArrayLike<number>,
  uncertainties: ArrayLike<number>,
  stepFactor = 1,
): Propagation {
  const n = estimates.length
  if (uncertainties.length !== n) return { ok: false, reason: 'size-mismatch', index: -1 }
  const x = Float64Array.from(estimates)
  const value = f(x)
  if (!Number.isFinite(value)) return { ok: false, reason: 'not-finite', index: -1 }
  const sensitivities = new Float64Array(n)
  const contributions = new Float64Array(n)
  let sum = 0
  for (let i = 0; i < n; i++) {
    const ui = uncertainties[i]!
    if (!(Number.isFinite(ui) && ui >= 0)) return { ok: false, reason: 'invalid-uncertainty', index: i }
    if (ui === 0) continue
    const h = stepFactor * ui
    const xi = x[i]!
    x[i] = xi + h
    const up = f(x)
    x[i] = xi - h
    const down = f(x)
    x[i] = xi
    const c = (up - down) / (2 * h)
    if (!Number.isFinite(c)) return { ok: false, reason: 'not-finite', index: i }
    sensitivities[i] = c
    contributions[i] = Math.abs(c) * ui
    sum += contributions[i]! * contributions[i]!
  }
  return { ok: true, value, u: Math.sqrt(sum), sensitivities, contributions }
}
