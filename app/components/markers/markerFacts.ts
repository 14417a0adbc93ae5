/**
 * The facts a card lists under a marker's value, as term and text pairs (each kind's module in app/kinds
 * says which), and the helpers they are written with. Lengths in the reader's unit; uncertainties given as
 * standard (k = 1) are shown expanded (k = 2) like every other value.
 */
import { formatLength, formatUncertainty, type LengthUnit } from '@shared/format/units'

export interface Fact {
  term: string
  text: string
}

const PM = '\u00b1'

/** A length and its expanded uncertainty: "1.204 m ± 3.1 mm". */
export function withU(value: number, expanded: number | null, unit: LengthUnit): string {
  return expanded === null ? formatLength(value, unit) : `${formatLength(value, unit)} ${PM} ${formatUncertainty(expanded, unit)}`
}

/** A point in a plane's own axes: "u 0.412 m, v 1.020 m". */
export function uv(p: readonly number[], unit: LengthUnit): string {
  return `u ${formatLength(p[0], unit)}, v ${formatLength(p[1], unit)}`
}
