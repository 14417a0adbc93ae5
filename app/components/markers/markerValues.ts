/**
 * Values as Spanmark writes them, in the reader's unit: a check's value with its uncertainty, parts, points
 * and residuals. Values come from the API in metres, degrees or square metres (check.unit); uncertainties in
 * parts are standard (k = 1), check.expandedUncertainty is k = 2. Knows no marker kind by name (the kinds'
 * modules in app/kinds use it).
 */
import { formatArea, formatDegrees, formatLength, formatUncertainty, formatWithUncertainty, type LengthUnit } from '@shared/format/units'
import { kindSpec, type Instance, type Marker, type Vec3 } from '@shared/schemas'

export type ValueKind = 'length' | 'angle' | 'area'

/** What the check's value measures: its stated unit, else what the kind gives. */
export function valueKindOf(marker: Marker): ValueKind {
  const unit = marker.check.unit
  if (unit === 'deg') return 'angle'
  if (unit === 'm2') return 'area'
  if (unit === 'm') return 'length'
  const kindUnit: string = kindSpec(marker.kind).unit
  return kindUnit === 'deg' ? 'angle' : kindUnit === 'm2' ? 'area' : 'length'
}

/** A single quantity in the value's own kind (no uncertainty): for breakdowns and parts. */
export function formatQuantity(value: number | null | undefined, kind: ValueKind, unit: LengthUnit): string {
  if (kind === 'angle') return formatDegrees(value, 2)
  if (kind === 'area') return formatArea(value, unit)
  return formatLength(value, unit)
}

/** A standard uncertainty (k = 1) of a part, in the value's own kind. */
export function formatPart(u: number | null | undefined, kind: ValueKind, unit: LengthUnit): string {
  if (kind === 'angle') return formatDegrees(u, 3)
  if (kind === 'area') return u === null || u === undefined || !Number.isFinite(u) ? '\u2014' : `${u.toFixed(4)} m\u00b2`
  return formatUncertainty(u, unit)
}

/** "0.912 m ± 4.0 mm (k = 2)", "88.40° ± 0.12° (k = 2)", "1.204 m²"; a dash while there is no value. */
export function valueText(marker: Marker, unit: LengthUnit): string {
  const c = marker.check
  return formatWithUncertainty(c.value, c.expandedUncertainty, valueKindOf(marker), unit, c.coverageFactor)
}

/** The expanded uncertainty alone in the value's kind, or null where there is none to state. */
export function uncertaintyShort(marker: Marker, unit: LengthUnit): string | null {
  const c = marker.check
  const kind = valueKindOf(marker)
  if (c.value === null || kind === 'area' || c.expandedUncertainty === null) return null
  return kind === 'angle' ? formatDegrees(c.expandedUncertainty, 2) : formatUncertainty(c.expandedUncertainty, unit)
}

/** The table's shorter form, its header saying "± U (k = 2)": "0.912 m ± 4.0 mm". */
export function valueShort(marker: Marker, unit: LengthUnit): string {
  const c = marker.check
  if (c.value === null) return '\u2014'
  const value = formatQuantity(c.value, valueKindOf(marker), unit)
  const u = uncertaintyShort(marker, unit)
  return u === null ? value : `${value} \u00b1 ${u}`
}

export function placementName(instances: readonly Instance[], instanceId: string | null | undefined): string {
  if (!instanceId) return '\u2014'
  return instances.find((i) => i.id === instanceId)?.scanName ?? 'a removed placement'
}

/** Scene-frame coordinates: "x 1.204 m, y −0.330 m, z 2.100 m". */
export function formatPoint(p: Vec3 | readonly number[] | null | undefined, unit: LengthUnit, axes: readonly string[] = ['x', 'y', 'z']): string {
  if (!p) return '\u2014'
  return p.map((c, i) => `${axes[i] ?? ''} ${formatLength(c, unit)}`.trim()).join(', ')
}

/** One anchor's residual against its tolerance: "1.2 mm ≤ 5.0 mm" (the word on/off the points goes beside it). */
export function residualText(residual: number | null, tolerance: number, unit: LengthUnit): string {
  if (residual === null) return `no stored point (tolerance ${formatUncertainty(tolerance, unit)})`
  return `${formatUncertainty(residual, unit)} ${residual <= tolerance ? '\u2264' : '>'} ${formatUncertainty(tolerance, unit)}`
}
