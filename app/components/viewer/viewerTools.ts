import { MARKER_KIND_UIS, kindOfTool } from '@/kinds'

/**
 * The viewer's tools and their one-letter keys, Spanmark's own scheme:
 * view tools  A anchor a point (pick), X a cut (section view), G go (walk), O the overview (show all);
 * marker tools (editors only), one per marker kind with the key its module gives (app/kinds: D distance,
 * N angle, the letter in the middle of the word, A being taken; S section marker; C clearance; ...);
 * aligning stations (those who may place scans) T, for tie points.
 * Walking keeps the arrows, R, V and Esc (viewer/WalkControls.ts), so no tool key clashes with walking.
 */
/** A marker tool's id (its kind's `tool.id`: 'distance', 'section-marker', ...). */
export type MarkerTool = string
export type ViewerTool = 'pick' | 'section' | 'align' | MarkerTool

const VIEW_KEYS = { pick: 'A', section: 'X', walk: 'G', fit: 'O', align: 'T' } as const

export const TOOL_KEYS: Readonly<Record<string, string>> & typeof VIEW_KEYS = {
  ...VIEW_KEYS,
  ...Object.fromEntries(MARKER_KIND_UIS.map((k) => [k.tool.id, k.tool.key])),
}

export const MARKER_TOOLS: readonly MarkerTool[] = MARKER_KIND_UIS.map((k) => k.tool.id)

export function isMarkerTool(tool: ViewerTool | null | undefined): tool is MarkerTool {
  return kindOfTool(tool) !== undefined
}
