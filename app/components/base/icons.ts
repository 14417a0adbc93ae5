/**
 * Spanmark's own line icons, drawn on a 16 x 16 grid with a 1.5 px stroke in currentColor.
 * Each entry is one or more SVG path `d` strings.
 */
export const ICONS = {
  plus: ['M8 3v10M3 8h10'],
  close: ['M4 4l8 8M12 4l-8 8'],
  check: ['M3 8.5l3.2 3L13 4.5'],
  chevronDown: ['M4 6l4 4 4-4'],
  arrowLeft: ['M13 8H3.5M7 4.5L3.5 8 7 11.5'],
  pencil: ['M10.5 2.8l2.7 2.7L6 12.7 2.8 13.2l.5-3.2z', 'M9.2 4.1l2.7 2.7'],
  trash: ['M2.8 4.5h10.4', 'M6.2 4.5V3h3.6v1.5', 'M4.2 4.5l.6 8.5h6.4l.6-8.5', 'M6.8 7v3.8M9.2 7v3.8'],
  person: ['M8 8.2a2.6 2.6 0 1 0 0-5.2 2.6 2.6 0 0 0 0 5.2z', 'M3 13.5c.6-2.5 2.6-3.8 5-3.8s4.4 1.3 5 3.8'],
  people: [
    'M6 7.6a2.3 2.3 0 1 0 0-4.6 2.3 2.3 0 0 0 0 4.6z',
    'M1.8 13c.5-2.2 2.2-3.4 4.2-3.4s3.7 1.2 4.2 3.4',
    'M10.6 3.2a2.2 2.2 0 0 1 0 4.3M12 9.8c1.2.5 2 1.6 2.3 3.2',
  ],
  signOut: ['M6.5 2.8H3.2v10.4h3.3', 'M10 5l3 3-3 3M13 8H6.5'],
  mail: ['M2.5 4h11v8h-11z', 'M2.8 4.4L8 8.6l5.2-4.2'],
  refresh: ['M13 4.5v2.8h-2.8', 'M12.7 7.2A5 5 0 1 0 12 10.6'],
  link: ['M6.8 9.2l2.4-2.4', 'M7.6 4.9l1.2-1.2a2.6 2.6 0 0 1 3.6 3.6l-1.2 1.2', 'M8.4 11.1l-1.2 1.2a2.6 2.6 0 0 1-3.6-3.6l1.2-1.2'],
  alert: ['M8 2.5l6 10.5H2z', 'M8 6.5v3', 'M8 11.3v.2'],
  span: ['M2.5 3.5v9M13.5 3.5v9', 'M4.5 8h7', 'M6.3 6.2L4.5 8l1.8 1.8M9.7 6.2L11.5 8l-1.8 1.8'],
  tool: ['M3 13l5.5-5.5', 'M9.3 2.8a3 3 0 0 0 3.9 3.9l-2.1 2.1-3.9-3.9z'],
  upload: ['M8 10.5V2.8', 'M4.8 6L8 2.8 11.2 6', 'M2.8 10.2v3h10.4v-3'],
  download: ['M8 2.8v7.7', 'M4.8 7.3L8 10.5l3.2-3.2', 'M2.8 10.2v3h10.4v-3'],
  copy: ['M5.5 5.5h7.7v7.7H5.5z', 'M10.5 5.5V2.8H2.8v7.7h2.7'],
  key: ['M5.3 10.7a2.6 2.6 0 1 0 0-5.2 2.6 2.6 0 0 0 0 5.2z', 'M7.9 8.1h5.6M11.5 8.1v2.2M13.5 8.1v1.6'],
  info: ['M8 14A6 6 0 1 0 8 2a6 6 0 0 0 0 12z', 'M8 7.3v3.7', 'M8 5v.2'],
  // Viewer tools (drawn for Spanmark): a ring with a centre dot and four short ticks; two upright slab faces
  // with the cut between; two footprints; four corners round a small box; a head-on eye at a plane.
  pick: ['M8 11.6A3.6 3.6 0 1 0 8 4.4a3.6 3.6 0 0 0 0 7.2z', 'M8 1.8v1.6M8 12.6v1.6M1.8 8h1.6M12.6 8h1.6', 'M8 8v.01'],
  section: ['M3.2 4.2l2.6-1.8v9.4l-2.6 1.8z', 'M10.2 4.2l2.6-1.8v9.4l-2.6 1.8z', 'M6.6 8.1h2.8'],
  walk: [
    'M5.2 2.6c.9 0 1.5.9 1.5 2.2S6.1 7.3 5.2 7.3 3.7 6.1 3.7 4.8s.6-2.2 1.5-2.2z',
    'M4.4 8.9h1.7v1.3a.85.85 0 0 1-1.7 0z',
    'M10.8 5.4c.9 0 1.5.9 1.5 2.2s-.6 2.5-1.5 2.5-1.5-1.2-1.5-2.5.6-2.2 1.5-2.2z',
    'M10 11.7h1.7V13a.85.85 0 0 1-1.7 0z',
  ],
  fit: ['M2.5 5.5v-3h3', 'M10.5 2.5h3v3', 'M13.5 10.5v3h-3', 'M5.5 13.5h-3v-3', 'M8 5.6l2.2 1.2v2.4L8 10.4 5.8 9.2V6.8z'],
  headOn: ['M2.5 3v10', 'M5 8h8.5', 'M11 5.6L13.5 8 11 10.4'],
  eye: ['M1.8 8s2.3-4.2 6.2-4.2S14.2 8 14.2 8 11.9 12.2 8 12.2 1.8 8 1.8 8z', 'M8 9.8a1.8 1.8 0 1 0 0-3.6 1.8 1.8 0 0 0 0 3.6z'],
  eyeOff: ['M1.8 8s2.3-4.2 6.2-4.2S14.2 8 14.2 8 11.9 12.2 8 12.2 1.8 8 1.8 8z', 'M3 13L13 3'],
  slide: ['M8 2.5v11M2.5 8h11', 'M6.4 4.1L8 2.5l1.6 1.6', 'M6.4 11.9L8 13.5l1.6-1.6', 'M4.1 6.4L2.5 8l1.6 1.6', 'M11.9 6.4L13.5 8l-1.6 1.6'],
  turn: ['M13 8.4A5 5 0 1 1 11.1 4.3', 'M11.6 1.8l-.5 2.6 2.6.4'],
  help: ['M8 14A6 6 0 1 0 8 2a6 6 0 0 0 0 12z', 'M6.3 6.3a1.8 1.8 0 1 1 2.5 1.6c-.5.3-.8.7-.8 1.2v.3', 'M8 11.4v.2'],
  // Marker kinds (drawn for Spanmark): two ends with the line between and end ticks; two arms from a vertex with
  // the arc between; a wall cut open round a doorway; an object held between two jambs with its gaps marked.
  kindDistance: ['M4 12L12 4', 'M2.4 10.4l3.2 3.2', 'M10.4 2.4l3.2 3.2'],
  kindAngle: ['M2.5 13h11', 'M2.5 13L10 3.5', 'M7 13A4.5 4.5 0 0 0 5.3 9.5'],
  kindSection: ['M2.5 13.5V4.5l2.5-2h6l2.5 2v9', 'M6 13.5V8.5h4v5', 'M1.5 13.5h13'],
  kindClearance: ['M2.5 2.5v11M13.5 2.5v11', 'M5.8 5.5h4.4v5H5.8z', 'M3.5 8h1.3M11.2 8h1.3'],
  /** Parts of a value: a stack of unequal bars. */
  parts: ['M2.5 4h11', 'M2.5 8h7', 'M2.5 12h4.5'],
  /** A marker's versions: a clock face turned back. */
  history: ['M3.2 8a4.8 4.8 0 1 0 1.4-3.4', 'M2.6 2.6v2.6h2.6', 'M8 5.3V8l1.9 1.3'],
  printer: ['M4.5 6V2.5h7V6', 'M4.5 11.5h-2v-5.5h11v5.5h-2', 'M4.5 9.5h7v4h-7z'],
  /** Comments: a speech balloon with two lines of text. */
  comment: ['M2.5 3h11v7.5H7.2L4.3 13v-2.5H2.5z', 'M5 5.6h6M5 7.9h4'],
  /** Review: a seal with a tick. */
  review: ['M8 1.8l1.5 1.1 1.8-.1.6 1.7 1.5 1-.5 1.8.5 1.8-1.5 1-.6 1.7-1.8-.1L8 13l-1.5-1.1-1.8.1-.6-1.7-1.5-1 .5-1.8-.5-1.8 1.5-1 .6-1.7 1.8.1z', 'M5.7 7.5l1.5 1.5 3.1-3.1'],
  /** Aligning stations: two tie points joined across, between the corners of two frames. */
  align: ['M6.5 11.5a2 2 0 1 1-4 0 2 2 0 0 1 4 0z', 'M13.5 4.5a2 2 0 1 1-4 0 2 2 0 0 1 4 0z', 'M6 10l4-4', 'M2 6.5V2h4.5', 'M14 9.5V14H9.5'],
  /** A checkpoint: a pennant on a staff. */
  pennant: ['M4 14V2.5', 'M4 3h8l-2.2 2.6L12 8.2H4'],
  /** An object: a crate seen from a corner, on a short base line. */
  object: ['M8 2.5l5 2.4v5.6L8 12.9 3 10.5V4.9z', 'M3 4.9l5 2.4 5-2.4', 'M8 7.3v5.6', 'M2 14.2h12'],
  /** A trim: a dashed frame with a blade across one corner. */
  trim: ['M2.5 5V2.5H5M7 2.5h2M11 2.5h2.5V5M13.5 7v2M13.5 11v2.5H11M9 13.5H7M5 13.5H2.5V11M2.5 9V7', 'M4.5 11.5l7-7'],
} as const

export type IconName = keyof typeof ICONS

/** An icon by name, or a path list drawn the same way (16 x 16 grid, 1.5 px stroke). */
export type IconSource = IconName | readonly string[]
