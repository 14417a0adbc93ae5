/** What the screen says for the scan fields the API gives as codes. */
import type { Scan, ScanFormat } from '@shared/schemas'

export const FORMAT_LABELS: Record<ScanFormat, string> = {
  ply: 'PLY',
  xyz: 'XYZ text',
  pcd: 'PCD',
  las: 'LAS',
  laz: 'LAZ',
  'station-log': 'station log',
  e57: 'E57',
}

/** The formats the upload takes, as the upload area lists them (the note shows on hover). */
export const ACCEPTED_FORMATS: readonly { label: string; extensions: string; note: string }[] = [
  { label: 'PLY', extensions: '.ply', note: 'ASCII, binary little or big endian' },
  { label: 'XYZ text', extensions: '.xyz .csv .txt', note: 'x y z, with or without colour and intensity columns' },
  { label: 'PCD', extensions: '.pcd', note: 'ASCII, binary or binary compressed' },
  { label: 'LAS', extensions: '.las', note: 'LAS 1.2 to 1.4' },
  { label: 'LAZ', extensions: '.laz', note: 'compressed LAS' },
  { label: 'station log', extensions: '.log', note: 'pan, tilt and range readings from a scanning head' },
  { label: 'E57', extensions: '.e57', note: 'ASTM E2807; a scan per station, placed at its pose in a new scene' },
]

export type UncertaintySource = NonNullable<Scan['uncertaintySource']>

export const UNCERTAINTY_SOURCES: Record<UncertaintySource, string> = {
  'per-point': 'per point, from repeated shots',
  estimated: 'estimated from plane fits',
  entered: 'entered',
}

/** Each reads after its count: "11,639 with too few valid range samples". */
const DROP_REASONS: Record<string, string> = {
  tooFewSamples: 'with too few valid range samples',
  beyondRatedRange: 'beyond the rated range',
  notANumber: 'without a return (NaN coordinates)',
}

export interface DroppedReason {
  count: number
  /** Reads after the count. A reason this list does not know yet still reads as words: "someReason" -> "some reason". */
  words: string
}

/** Readings left out, one entry per reason, the largest first. */
export function droppedReasons(dropped: Scan['dropped']): DroppedReason[] {
  return Object.entries(dropped)
    .filter(([, n]) => n > 0)
    .sort((a, b) => b[1] - a[1])
    .map(([code, count]) => ({ count, words: DROP_REASONS[code] ?? code.replace(/([a-z0-9])([A-Z])/g, '$1 $2').toLowerCase() }))
}

export function droppedTotal(dropped: Scan['dropped']): number {
  return Object.values(dropped).reduce((sum, n) => sum + (n > 0 ? n : 0), 0)
}
