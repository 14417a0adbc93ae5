/** The section marker's tool: S (the view's slab tool is X, "a cut"). Other kinds' panels name its key. */
export const SECTION_TOOL = { id: 'section-marker', key: 'S', label: 'Section marker: a plane through the points' } as const
