import type { MarkerKind } from '@shared/schemas'
import { angleUi } from './angle'
import { clearanceUi } from './clearance'
import { distanceUi } from './distance'
import { pointToPlaneUi } from './pointToPlane'
import { sectionUi } from './section'
import { sizeUi } from './size'
import type { MarkerKindUi } from './types'

/**
 * The client's side of the marker kinds, one folder each (app/kinds/<kind>/: words, icon, colour, tool,
 * placing panel, drawing, card). The dock, the placing tools, the viewport, the drawer and the card read
 * them through this registry; the kinds themselves (schemas, checks) are in shared/kinds and
 * server/markers/kinds. Adding a kind: DEVELOPERS.md, "Adding things": a marker kind.
 */
const KIND_UIS: { [K in MarkerKind]: MarkerKindUi<K> } = {
  distance: distanceUi,
  angle: angleUi,
  section: sectionUi,
  clearance: clearanceUi,
  'point-to-plane': pointToPlaneUi,
  size: sizeUi,
}

/** The kinds in the dock's order. */
export const MARKER_KIND_UIS: readonly MarkerKindUi[] = Object.values(KIND_UIS)

export function kindUi(kind: MarkerKind): MarkerKindUi {
  return KIND_UIS[kind] as MarkerKindUi
}

/** The kind a marker tool makes (by the tool's id), or undefined for the view tools. */
export function kindOfTool(toolId: string | null | undefined): MarkerKindUi | undefined {
  return MARKER_KIND_UIS.find((k) => k.tool.id === toolId)
}

export type { MarkerKindUi, PlacingContext, CardContext, KindDrawing, KindFigure } from './types'
