/**
 * Lengths for the screen. Values come in metres, the API's unit. Small ones (under 0.1 m: point spacing,
 * uncertainties, margins) read in millimetres to a tenth ("2.0 mm"); longer ones in metres to the
 * millimetre ("0.912 m"). A no-break space holds number and unit together; the reader's locale chooses
 * the decimal mark. Show them in tabular figures (class `sm-num`).
 */
import type { Bounds } from '@shared/schemas'

const NBSP = '\u00a0'
const DASH = '–'

/** Below this many metres a length reads in millimetres. */
export const MILLIMETRES_BELOW = 0.1

function fixed(digits: number): Intl.NumberFormat {
  // signDisplay 'negative': a value that rounds to zero never shows as "-0.0".
  return new Intl.NumberFormat(undefined, { minimumFractionDigits: digits, maximumFractionDigits: digits, signDisplay: 'negative' })
}

const mmFormats = [fixed(0), fixed(1), fixed(2)]
const mFormats = [fixed(0), fixed(1), fixed(2), fixed(3)]
const mTrimmed = new Intl.NumberFormat(undefined, { maximumFractionDigits: 3, signDisplay: 'negative' })

/** "2.0 mm" from 0.002 (metres in, millimetres out). */
export function formatMillimetres(metres: number, digits: 0 | 1 | 2 = 1): string {
  if (!Number.isFinite(metres)) return DASH
  return `${mmFormats[digits]!.format(metres * 1000)}${NBSP}mm`
}

/** "0.912 m"; with `trim`, trailing zeros go ("40 m" for a rated range). */
export function formatMetres(metres: number, options: { digits?: 0 | 1 | 2 | 3; trim?: boolean } = {}): string {
  if (!Number.isFinite(metres)) return DASH
  const format = options.trim ? mTrimmed : mFormats[options.digits ?? 3]!
  return `${format.format(metres)}${NBSP}m`
}

/** Millimetres under 0.1 m, metres from there: "4.0 mm", "0.912 m", "12.655 m". */
export function formatLengthBySize(metres: number): string {
  return Math.abs(metres) < MILLIMETRES_BELOW ? formatMillimetres(metres) : formatMetres(metres)
}

/** The size of a box along x, y and z: "1.347 × 0.651 × 0.859 m". */
export function formatExtent(bounds: Bounds): string {
  const sizes = bounds.max.map((max, axis) => max - (bounds.min[axis] ?? max))
  if (!sizes.every(Number.isFinite)) return DASH
  return `${sizes.map((s) => mFormats[3]!.format(s)).join(' × ')}${NBSP}m`
}
