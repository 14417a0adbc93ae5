/**
 * Lengths, areas, angles and uncertainties as people read them, in the unit the reader chose: metres (to the
 * millimetre), millimetres (to a tenth) or feet and inches (to the nearest 1/16 in). Shared by every screen
 * and, later, the measurement sheet. Values are metres in and out. 1 ft = 0.3048 m and 1 in = 0.0254 m
 * exactly (the international yard and pound agreement of 1959). Field text (`lengthField`) carries no unit
 * sign for m and mm; feet-inches always reads like 4' 3 5/8".
 */
export const LENGTH_UNITS = ['m', 'mm', 'ft-in'] as const
export type LengthUnit = (typeof LENGTH_UNITS)[number]

export const LENGTH_UNIT_LABELS: Record<LengthUnit, string> = { m: 'm', mm: 'mm', 'ft-in': 'ft-in' }

export const METRES_PER_FOOT = 0.3048
export const METRES_PER_INCH = 0.0254
const SIXTEENTHS_PER_FOOT = 12 * 16

const NBSP = '\u00a0'
/** The minus sign (U+2212) for values read on screen; form fields keep the ASCII hyphen. */
const MINUS = '\u2212'

function fixed(digits: number): Intl.NumberFormat {
  return new Intl.NumberFormat('en-US', { minimumFractionDigits: digits, maximumFractionDigits: digits, useGrouping: false, signDisplay: 'negative' })
}
const M3 = fixed(3)
const MM1 = fixed(1)

/** Feet, inches and sixteenths of an inch, the fraction reduced: 1.2954 m -> 4' 3", 0.0015875 m -> 0' 0 1/16". */
export function feetInches(metres: number): string {
  const negative = metres < 0
  const sixteenths = Math.round((Math.abs(metres) / METRES_PER_INCH) * 16)
  const feet = Math.floor(sixteenths / SIXTEENTHS_PER_FOOT)
  const rest = sixteenths - feet * SIXTEENTHS_PER_FOOT
  const inches = Math.floor(rest / 16)
  let num = rest - inches * 16
  let den = 16
  while (num > 0 && num % 2 === 0) {
    num /= 2
    den /= 2
  }
  const fraction = num > 0 ? ` ${num}/${den}` : ''
  const sign = negative && sixteenths > 0 ? '-' : ''
  return `${sign}${feet}' ${inches}${fraction}"`
}

/** A length for reading: "1.234 m", "1234.5 mm", "4' 0 9/16"". */
export function formatIn(metres: number, unit: LengthUnit): string {
  if (!Number.isFinite(metres)) return '–'
  if (unit === 'mm') return `${MM1.format(metres * 1000).replace('-', MINUS)}${NBSP}mm`
  if (unit === 'ft-in') return feetInches(metres)
  return `${M3.format(metres).replace('-', MINUS)}${NBSP}m`
}

/** A length as a form field's text (no unit sign for m and mm). */
export function lengthField(metres: number, unit: LengthUnit): string {
  if (unit === 'mm') return MM1.format(metres * 1000)
  if (unit === 'ft-in') return feetInches(metres)
  return M3.format(metres)
}

function plainNumber(text: string): number | null {
  const t = text.trim().replace(/\s+/g, '')
  // A decimal comma is taken when there is no point.
  const normal = t.includes('.') ? t : t.replace(',', '.')
  if (!/^[+-]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i.test(normal)) return null
  const value = Number(normal)
  return Number.isFinite(value) ? value : null
}

const FEET_INCHES = /^([+-])?\s*(?:(\d+(?:\.\d+)?)\s*(?:'|′|ft)\s*)?(?:(\d+(?:\.\d+)?)?\s*(?:(\d+)\s*\/\s*(\d+))?\s*(?:"|″|in)?)?$/i

/** Parses a field's text in `unit` to metres, or gives the reason it cannot. In ft-in a bare number is inches. */
export function parseLength(text: string, unit: LengthUnit): { metres: number } | { error: string } {
  const t = text.trim()
  if (t === '') return { error: 'Enter a length.' }
  if (unit !== 'ft-in') {
    const value = plainNumber(t)
    if (value === null) return { error: unit === 'mm' ? 'Enter a number of millimetres, such as 1250.5.' : 'Enter a number of metres, such as 1.25.' }
    return { metres: unit === 'mm' ? value / 1000 : value }
  }
  const m = FEET_INCHES.exec(t)
  if (!m || (m[2] === undefined && m[3] === undefined && m[4] === undefined)) return { error: `Enter feet and inches, such as 4' 3 5/8".` }
  const [, sign, feet, inches, num, den] = m
  if (den !== undefined && Number(den) === 0) return { error: 'A fraction cannot have 0 below the line.' }
  const totalInches = Number(feet ?? 0) * 12 + Number(inches ?? 0) + (num !== undefined ? Number(num) / Number(den) : 0)
  if (!Number.isFinite(totalInches)) return { error: `Enter feet and inches, such as 4' 3 5/8".` }
  return { metres: (sign === '-' ? -1 : 1) * totalInches * METRES_PER_INCH }
}

/** Degrees for a field, to a thousandth. */
export function angleField(degrees: number): string {
  return M3.format(degrees)
}

export function parseAngle(text: string): { degrees: number } | { error: string } {
  const value = plainNumber(text.replace(/°$/, ''))
  if (value === null) return { error: 'Enter an angle in degrees, such as 90 or -12.5.' }
  if (Math.abs(value) > 360) return { error: 'Enter an angle from -360° to 360°.' }
  return { degrees: value }
}

const PM = '\u00b1'

/** A length in the chosen unit, a dash for a missing value: 0.912 m, 912.0 mm, 2' 11 7/8". */
export function formatLength(metres: number | null | undefined, unit: LengthUnit): string {
  if (metres === null || metres === undefined || !Number.isFinite(metres)) return '\u2014'
  return formatIn(metres, unit)
}

/** An uncertainty: millimetres for metric (one decimal under 10 mm), sixteenths of an inch otherwise. */
export function formatUncertainty(metres: number | null | undefined, unit: LengthUnit): string {
  if (metres === null || metres === undefined || !Number.isFinite(metres)) return '\u2014'
  if (unit === 'ft-in') {
    const sixteenths = Math.max(1, Math.ceil((Math.abs(metres) / METRES_PER_INCH) * 16))
    const whole = Math.floor(sixteenths / 16)
    let num = sixteenths - whole * 16, den = 16
    while (num > 0 && num % 2 === 0) (num /= 2), (den /= 2)
    const fraction = num > 0 ? `${num}/${den}` : ''
    return whole === 0 ? `${fraction}"` : fraction ? `${whole} ${fraction}"` : `${whole}"`
  }
  const mm = Math.abs(metres) * 1000
  return mm < 10 ? `${mm.toFixed(1)}\u00a0mm` : `${mm.toFixed(0)}\u00a0mm`
}

export function formatArea(squareMetres: number | null | undefined, unit: LengthUnit): string {
  if (squareMetres === null || squareMetres === undefined || !Number.isFinite(squareMetres)) return '\u2014'
  if (unit === 'ft-in') return `${(squareMetres / 0.09290304).toFixed(2)}\u00a0ft\u00b2`
  return `${squareMetres.toFixed(3)}\u00a0m\u00b2`
}

export function formatDegrees(degrees: number | null | undefined, decimals = 2): string {
  if (degrees === null || degrees === undefined || !Number.isFinite(degrees)) return '\u2014'
  return `${new Intl.NumberFormat('en-US', { minimumFractionDigits: decimals, maximumFractionDigits: decimals, useGrouping: false, signDisplay: 'negative' }).format(degrees)}\u00b0`
}

/**
 * "value +- U (k = 2)" as Spanmark writes it: 0.912 m +- 4.0 mm (k = 2). Uncertainties are rounded up
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
