import type { RmsSource } from '@shared/schemas'

/** Which figure a registration RMS is, in the screen's words (the trade's: check point, tie point, RMS). */
export const RMS_SOURCE_WORDS: Record<RmsSource, string> = {
  'check-points': 'check points',
  icp: 'ICP, point to plane',
  'tie-points': 'tie points',
}
