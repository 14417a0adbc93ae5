/**
 * Lengths and angles as people read them: metres, millimetres, or feet and inches (the international foot,
 * exactly 0.3048 m, and inch, 0.0254 m: NIST SP 811 appendix B). Values in tables use tabular figures; this
 * module only makes the text.
 */

export const LENGTH_UNITS = ['m', 'mm', 'ft-in'] as const
export type LengthUnit = (typeof LENGTH_UNITS)[number]

export const METRES_PER_INCH = 0.0254
export const INCH_FRACTION = 16

const MINUS = '\u2212'
const PM = '\u00b1'

function sign(x: number): string {
  return x < 0 ? MINUS : ''
}

/** Decimals for a value in metres or millimetres. */
function fixed(x: number, decimals: number): string {
  const text = Math.abs(x).toFixed(decimals)
  return Number(text) === 0 ? text : sign(x) + text
}

/** Whole inches and sixteenths, reduced (3/8 rather than 6/16). */
function inchesText(totalSixteenths: number): { whole: number; fraction: string } {
  const whole = Math.floor(totalSixteenths / INCH_FRACTION)
  let num = totalSixteenths % INCH_FRACTION
  let den = INCH_FRACTION
  while (num > 0 && num % 2 === 0) {
    num /= 2
    den /= 2
  }
  return { whole, fraction: num === 0 ? '' : `${num}/${den}` }
}

/** Feet and inches to the nearest 1/16 in: 3' 4 5/16". Lengths under a foot are inches only. */
export function feetInches(metres: number): string {
  const sixteenths = Math.round((Math.abs(metres) / METRES_PER_INCH) * INCH_FRACTION)
  const feet = Math.floor(sixteenths / (12 * INCH_FRACTION))
  const { whole, fraction } = inchesText(sixteenths - feet * 12 * INCH_FRACTION)
  const inches = whole === 0 && fraction ? fraction : fraction ? `${whole} ${fraction}` : `${whole}`
  const s = sixteenths === 0 ? '' : sign(metres)
  return feet > 0 ? `${s}${feet}' ${inches}"` : `${s}${inches}"`
}

/** A length in the chosen unit: 0.912 m, 912 mm, 2' 11 7/8". */
export function formatLength(metres: number | null | undefined, unit: LengthUnit): string {
  if (metres === null || metres === undefined || !Number.isFinite(metres)) return '\u2014'
  if (unit === 'mm') return `${fixed(metres * 1000, 0)} mm`
  if (unit === 'ft-in') return feetInches(metres)
  return `${fixed(metres, 3)} m`
}

/** An uncertainty: millimetres for metric (one decimal under 10 mm), sixteenths of an inch otherwise. */
export function formatUncertainty(metres: number | null | undefined, unit: LengthUnit): string {
  if (metres === null || metres === undefined || !Number.isFinite(metres)) return '\u2014'
  if (unit === 'ft-in') {
    const sixteenths = Math.max(1, Math.ceil((Math.abs(metres) / METRES_PER_INCH) * INCH_FRACTION))
    const { whole, fraction } = inchesText(sixteenths)
    return whole === 0 ? `${fraction}"` : fraction ? `${whole} ${fraction}"` : `${whole}"`
  }
  const mm = Math.abs(metres) * 1000
  return mm < 10 ? `${mm.toFixed(1)} mm` : `${mm.toFixed(0)} mm`
}

export function formatArea(squareMetres: number | null | undefined, unit: LengthUnit): string {
  if (squareMetres === null || squareMetres === undefined || !Number.isFinite(squareMetres)) return '\u2014'
  if (unit === 'ft-in') return `${(squareMetres / 0.09290304).toFixed(2)} ft\u00b2`
  return `${squareMetres.toFixed(3)} m\u00b2`
}

export function formatDegrees(degrees: number | null | undefined, decimals = 2): string {
  if (degrees === null || degrees === undefined || !Number.isFinite(degrees)) return '\u2014'
  return `${fixed(degrees, decimals)}\u00b0`
}

/**
 * "value +- U (k = 2)" as BRAND.md writes it: 0.912 m +- 4.0 mm (k = 2). Uncertainties are rounded up
 * (ceil) in ft-in so the stated interval is never narrower than the computed one.
 */
export function formatWithUncertainty(
  value: number | null | undefined,
  expanded: number | null | undefined,
  kind: 'length' | 'angle' | 'area',
  unit: LengthUnit,
  k = 2,
): string {
  if (value === null || value === undefined) return '\u2014'
  if (kind === 'angle') {
    const u = expanded === null || expanded === undefined ? '' : ` ${PM} ${formatDegrees(expanded, 2)} (k = ${k})`
    return `${formatDegrees(value, 2)}${u}`
  }
  if (kind === 'area') return formatArea(value, unit)
  const u = expanded === null || expanded === undefined ? '' : ` ${PM} ${formatUncertainty(expanded, unit)} (k = ${k})`
  return `${formatLength(value, unit)}${u}`
}
