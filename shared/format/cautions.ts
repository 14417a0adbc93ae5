/**
 * The cautions Spanmark shows (laser eye safety, clearance as a planning aid, verification by a licensed surveyor) in Spanmark's own words: one place for the screen, the measurement sheet
 * and its CSV.
 */
export const CAUTIONS = {
  laser: 'Respect the instrument’s laser class (IEC 60825-1); do not scan towards faces in public spaces.',
  clearance: 'Clearance results are planning aids: moving heavy or valuable objects is planned by qualified riggers with margin.',
  engineering: 'Measurements used for engineering, legal or safety decisions are verified by a licensed surveyor under local codes.',
} as const

/** Beside every clearance result. */
export const CLEARANCE_CAUTION = `${CAUTIONS.clearance.replace(/\.$/, ';')} ${CAUTIONS.engineering.charAt(0).toLowerCase()}${CAUTIONS.engineering.slice(1)}`
