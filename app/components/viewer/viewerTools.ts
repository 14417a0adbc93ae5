/** The viewer's tools and their one-letter keys (Spanmark's own: A for anchor a point, X for a cut, G to go, O for the overview). */
export type ViewerTool = 'pick' | 'section'

export const TOOL_KEYS = { pick: 'A', section: 'X', walk: 'G', fit: 'O' } as const
