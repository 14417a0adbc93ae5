/**
 * The facts the card lists under a marker's value, per kind, as term and text pairs: a distance's parts
 * along the scene axes, a section's extents and opening, a clearance's fit. Lengths in the reader's unit;
 * the distance's horizontal and vertical uncertainties come as standard (k = 1) and are shown expanded
 * (k = 2) like every other value.
 */
import { formatArea, formatDegrees, formatLength, formatUncertainty, type LengthUnit } from '@shared/format/units'
import type { Instance, Marker } from '@shared/schemas'
import { formatCount } from '@/lib/format'
import { placementName } from './markerText'

export interface Fact {
  term: string
  text: string
}

const PM = '\u00b1'

const CARRIAGE_WORDS = { floor: 'resting on the floor', trolley: 'on a trolley or skates', carried: 'carried, free in the opening' } as const

function withU(value: number, expanded: number | null, unit: LengthUnit): string {
  return expanded === null ? formatLength(value, unit) : `${formatLength(value, unit)} ${PM} ${formatUncertainty(expanded, unit)}`
}

function uv(p: readonly number[], unit: LengthUnit): string {
  return `u ${formatLength(p[0], unit)}, v ${formatLength(p[1], unit)}`
}

export function distanceFacts(marker: Marker, unit: LengthUnit): Fact[] {
  const d = marker.check.distance
  if (!d) return []
  const k = marker.check.coverageFactor
  return [
    { term: 'dX', text: formatLength(d.dx, unit) },
    { term: 'dY', text: formatLength(d.dy, unit) },
    { term: 'dZ', text: formatLength(d.dz, unit) },
    { term: 'horizontal', text: d.uHorizontal === null ? `${formatLength(d.horizontal, unit)} (no uncertainty: plumb)` : withU(d.horizontal, k * d.uHorizontal, unit) },
    { term: 'vertical', text: withU(d.vertical, k * d.uVertical, unit) },
  ]
}

export function sectionFacts(marker: Marker, unit: LengthUnit): Fact[] {
  const s = marker.check.section
  if (!s) return []
  const e = s.extents
  const out: Fact[] = [
    { term: 'points in the slab', text: formatCount(s.pointCount) },
    { term: 'slab thickness', text: formatLength(s.thickness, unit) },
    { term: 'extents', text: `${formatLength(e.uMax - e.uMin, unit)} along u \u00d7 ${formatLength(e.vMax - e.vMin, unit)} along v` },
    { term: 'area of the points', text: formatArea(s.area, unit) },
    { term: 'point spacing', text: formatUncertainty(s.spacing, unit) },
  ]
  const o = s.opening
  if (o) {
    out.push(
      { term: 'clear width', text: withU(o.clearWidth, o.uncertainty.width, unit) },
      { term: 'clear height', text: withU(o.clearHeight, o.uncertainty.height, unit) },
      { term: 'opening area', text: formatArea(o.area, unit) },
    )
  } else if (s.openingProblem) {
    out.push({ term: 'opening', text: s.openingProblem })
  }
  return out
}

export function clearanceFacts(marker: Marker, markers: readonly Marker[], instances: readonly Instance[], unit: LengthUnit): Fact[] {
  const c = marker.check.clearance
  const params = marker.params as { objectInstanceId?: string; sectionMarkerId?: string }
  const section = markers.find((m) => m.id === params.sectionMarkerId)
  const out: Fact[] = [
    { term: 'object', text: placementName(instances, params.objectInstanceId) },
    { term: 'through', text: section ? section.label : 'a removed section' },
  ]
  if (!c) return out
  out.push(
    { term: 'smallest margin', text: withU(c.margin, marker.check.expandedUncertainty, unit) },
    { term: 'required margin', text: formatLength(c.requiredMargin, unit) },
    ...(c.orientation
      ? [
          { term: 'best way through', text: c.orientation.words },
          { term: 'as it stands', text: `${formatLength(c.orientation.asItStands, unit)} (the search's grid value)` },
        ]
      : [{ term: 'best turn in the plane', text: formatDegrees(c.rotationDegrees, 1) }]),
    ...(c.carriage ? [{ term: 'moved', text: CARRIAGE_WORDS[c.carriage.mode] + (c.carriage.mode === 'floor' || c.carriage.floorFound ? '' : ' (no floor found under the opening)') }] : []),
    { term: 'where (object)', text: uv(c.nearest.silhouettePoint, unit) },
    { term: 'where (opening)', text: uv(c.nearest.boundaryPoint, unit) },
    { term: 'object points', text: formatCount(c.objectPointCount) },
  )
  return out
}

/** The facts for any kind (an angle has none beyond its value). */
export function factsOf(marker: Marker, markers: readonly Marker[], instances: readonly Instance[], unit: LengthUnit): Fact[] {
  if (marker.kind === 'distance') return distanceFacts(marker, unit)
  if (marker.kind === 'section') return sectionFacts(marker, unit)
  if (marker.kind === 'clearance') return clearanceFacts(marker, markers, instances, unit)
  return []
}
