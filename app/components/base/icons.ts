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
} as const

export type IconName = keyof typeof ICONS
