/**
 * The one table of state names (glossary in DEVELOPERS.md): API, live documents and screens all use these codes;
 * the words people read are Spanmark's own (the glossary in DEVELOPERS.md). State is never told by colour alone, so every state
 * also names its shape (drawn by the client's StateMark).
 */

export const CHECK_STATES = ['pending', 'checked', 'off-scan', 'too-few-points', 'invalid-geometry'] as const
export type CheckState = (typeof CHECK_STATES)[number]

export const CLEARANCE_OUTCOMES = ['passes', 'does-not-pass', 'too-close-to-call'] as const
export type ClearanceOutcome = (typeof CLEARANCE_OUTCOMES)[number]

export const REVIEW_STATES = ['open', 'changes-asked', 'signed-off'] as const
export type ReviewState = (typeof REVIEW_STATES)[number]

/** Spanmark's state shapes: filled disc, hollow ring with a cross, half disc, small spinner. */
export type StateShape = 'disc' | 'ring-cross' | 'half-disc' | 'spinner' | 'ring'
/** Spanmark's colour roles (the client maps them to its theme's shades). */
export type StateTone = 'good' | 'bad' | 'unsure' | 'neutral'

export interface StateLook {
  /** The words on screen. */
  word: string
  shape: StateShape
  tone: StateTone
  /** One sentence for a tooltip or the detail card. */
  help: string
}

export const CHECK_STATE_LOOK: Record<CheckState, StateLook> = {
  pending: { word: 'checking...', shape: 'spinner', tone: 'unsure', help: 'The server is checking this marker against the stored points.' },
  checked: { word: 'on the points', shape: 'disc', tone: 'good', help: 'Every anchor lies on stored points within the tolerance; the value is computed from them.' },
  'off-scan': { word: 'off the points', shape: 'ring-cross', tone: 'bad', help: 'At least one anchor is farther from the stored points than the tolerance.' },
  'too-few-points': { word: 'too sparse', shape: 'half-disc', tone: 'unsure', help: 'The section holds too few stored points to give an outline.' },
  'invalid-geometry': { word: 'cannot be measured', shape: 'ring-cross', tone: 'bad', help: 'The geometry is degenerate: a zero length, collinear points, an empty slab or a missing object.' },
}

export const CLEARANCE_LOOK: Record<ClearanceOutcome, StateLook> = {
  passes: { word: 'passes', shape: 'disc', tone: 'good', help: 'The smallest margin less its uncertainty still meets the required margin.' },
  'does-not-pass': { word: 'does not pass', shape: 'ring-cross', tone: 'bad', help: 'Even the smallest margin plus its uncertainty falls short of the required margin.' },
  'too-close-to-call': { word: 'too close to call', shape: 'half-disc', tone: 'unsure', help: 'The required margin lies within the uncertainty of the smallest margin.' },
}

export const REVIEW_LOOK: Record<ReviewState, StateLook> = {
  open: { word: 'open', shape: 'ring', tone: 'neutral', help: 'Not yet reviewed.' },
  'changes-asked': { word: 'changes asked', shape: 'ring-cross', tone: 'bad', help: 'The reviewer asked for changes.' },
  'signed-off': { word: 'signed off', shape: 'disc', tone: 'good', help: 'A mentor or owner signed this marker off.' },
}
