import type { MarkerKind } from '@shared/schemas'

/**
 * The viewer's tools and their one-letter keys, Spanmark's own scheme:
 * view tools  A anchor a point (pick), X a cut (section view), G go (walk), O the overview (show all);
 * marker tools (editors only) D distance, N angle (the letter in the middle of the word, A being taken),
 * S section marker, C clearance; aligning stations (those who may place scans) T, for tie points.
 * Walking keeps the arrows, R, V and Esc (viewer/WalkControls.ts), so no tool key clashes with walking.
 */
export type MarkerTool = 'distance' | 'angle' | 'section-marker' | 'clearance'
export type ViewerTool = 'pick' | 'section' | 'align' | MarkerTool

export const TOOL_KEYS = { pick: 'A', section: 'X', walk: 'G', fit: 'O', distance: 'D', angle: 'N', 'section-marker': 'S', clearance: 'C', align: 'T' } as const

export const MARKER_TOOLS: readonly MarkerTool[] = ['distance', 'angle', 'section-marker', 'clearance']

/** The marker kind each marker tool makes. */
export const MARKER_TOOL_KIND: Record<MarkerTool, MarkerKind> = { distance: 'distance', angle: 'angle', 'section-marker': 'section', clearance: 'clearance' }

export function isMarkerTool(tool: ViewerTool | null | undefined): tool is MarkerTool {
  return tool === 'distance' || tool === 'angle' || tool === 'section-marker' || tool === 'clearance'
}
