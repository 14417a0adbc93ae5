/**
 * The align tool's tie pairs on the page: which side the next click fills, the fit request they make, the
 * words the panel shows and what the viewport draws. Pure functions (no Vue, no three.js), unit-tested.
 *
 * Frames: a pick is kept as its stored point in the scan's own frame (`scanPoint`); the request and the
 * drawing turn it into the scene frame with whichever matrix applies (the server's for the request, so a
 * previewed alignment on screen never shifts what is sent; the drawn one for the viewport).
 */
import { transformPoint } from '@shared/geometry/rigidTransform'
import { formatLength, formatUncertainty, type LengthUnit } from '@shared/format/units'
import type { Registration, RegistrationFitBody, TieTarget } from '@shared/schemas'
import type { MarkerView } from '@/viewer/markerLayer'
import type { Vec3 } from '@/viewer/types'

export type TieSideName = 'moving' | 'held'

export interface TieSidePick {
  instanceId: string
  /** The stored point clicked, scan frame. */
  scanPoint: Vec3
}

export interface TiePairDraft {
  /** Stable across edits (rows keep their number while others are removed). */
  key: number
  moving: TieSidePick | null
  held: TieSidePick | null
  checkPoint: boolean
  enabled: boolean
}

/** The slot the next click fills: a pair (index; pairs.length for a new one) and its side. */
export interface TieSlot {
  index: number
  side: TieSideName
}

export const MIN_TIE_PAIRS = 3
/** Colours of tie points in the viewport: Spanmark's ochre for fitted pairs, its pale ramp for check points. */
export const TIE_COLOUR = '#C98A12'
export const CHECK_COLOUR = '#F0D28C'
export const TIE_VIEW_PREFIX = '__tie-'

export const isComplete = (p: TiePairDraft): p is TiePairDraft & { moving: TieSidePick; held: TieSidePick } => p.moving !== null && p.held !== null

/** Where the next click goes: the slot asked for (re-picking), else the open side of the last pair, else a new pair. */
export function nextSlot(pairs: readonly TiePairDraft[], repick: TieSlot | null): TieSlot {
  if (repick && repick.index < pairs.length) return repick
  const last = pairs.at(-1)
  if (last && !last.moving) return { index: pairs.length - 1, side: 'moving' }
  if (last && !last.held) return { index: pairs.length - 1, side: 'held' }
  return { index: pairs.length, side: 'moving' }
}

/** The pairs with a click put into a slot (a new pair when the slot is past the end). */
export function placePick(pairs: readonly TiePairDraft[], slot: TieSlot, pick: TieSidePick, nextKey: number): TiePairDraft[] {
  const out = pairs.map((p) => ({ ...p }))
  if (slot.index >= out.length) out.push({ key: nextKey, moving: null, held: null, checkPoint: false, enabled: true })
  out[slot.index] = { ...out[slot.index]!, [slot.side]: pick }
  return out
}

/** Complete, enabled, non-check pairs: the ones a fit uses. */
export function fitCount(pairs: readonly TiePairDraft[]): number {
  return pairs.filter((p) => isComplete(p) && p.enabled && !p.checkPoint).length
}

/** Why the pairs cannot be fitted yet, in the panel's words, or null. */
export function pairsProblem(pairs: readonly TiePairDraft[]): string | null {
  const n = fitCount(pairs)
  if (n >= MIN_TIE_PAIRS) return null
  return `${n} of ${MIN_TIE_PAIRS} tie pairs to fit with so far (check points and pairs left out do not count).`
}

/** The fit request: complete pairs only, in order (their keys say which row each answer belongs to). */
export function fitBody(
  pairs: readonly TiePairDraft[],
  movingInstanceId: string,
  heldInstanceId: string,
  serverMatrix: (instanceId: string) => readonly number[] | undefined,
  target: TieTarget,
  sphereRadius: number,
): { body: RegistrationFitBody; keys: number[] } {
  const keys: number[] = []
  const sent = pairs.filter(isComplete).map((p) => {
    keys.push(p.key)
    const at = (s: TieSidePick) => {
      const m = serverMatrix(s.instanceId)
      const [x, y, z] = m ? transformPoint(m, ...s.scanPoint) : s.scanPoint
      return { x, y, z }
    }
    return { moving: at(p.moving), held: at(p.held), checkPoint: p.checkPoint, enabled: p.enabled, target }
  })
  return { body: { movingInstanceId, heldInstanceId, pairs: sent, method: 'svd', sphereRadius }, keys }
}

/** What to click next. */
export function alignHint(slot: TieSlot, names: { moving: string; held: string }, pairs: readonly TiePairDraft[]): string {
  const n = slot.index + 1
  if (slot.side === 'moving') {
    const again = slot.index < pairs.length && pairs[slot.index]!.moving ? ' again' : ''
    return `Tie pair ${n}: click the point${again} on “${names.moving}” (the placement that moves).`
  }
  return `Tie pair ${n}: now click the same point on “${names.held}” (the placement that stays).`
}

/**
 * An API error about a pair (`pairs.<i>.<side>`: i counts the pairs sent) in the panel's words: the row's
 * number and the placement's name; other errors as the server said them, without the "body." prefix.
 */
export function alignErrorText(message: string, field: string | undefined, keys: readonly number[], pairs: readonly TiePairDraft[], names: { moving: string; held: string }): string {
  const text = message.replace(/^body\.[\w.]+:\s*/, '')
  const m = field ? /^pairs\.(\d+)(?:\.(moving|held))?$/.exec(field) : null
  if (!m) return text.charAt(0).toUpperCase() + text.slice(1)
  const row = pairs.findIndex((p) => p.key === keys[Number(m[1])])
  const where = m[2] ? ` on “${names[m[2] as TieSideName]}”` : ''
  return `Tie pair ${row + 1}${where}: ${text}`
}

/** The answer's residual per row (by key), metres; null for rows not in that fit or left out. */
export function residualsByKey(registration: Registration | null, keys: readonly number[]): Map<number, number | null> {
  const out = new Map<number, number | null>()
  if (!registration) return out
  registration.pairs.forEach((p, i) => {
    const key = keys[i]
    if (key !== undefined) out.set(key, p.distance)
  })
  return out
}

/** A fingerprint of what a fit would send: a fit made from other pairs is out of date. */
export function pairsSignature(pairs: readonly TiePairDraft[], target: TieTarget, radius: number): string {
  return JSON.stringify([target, radius, pairs.filter(isComplete).map((p) => [p.moving.scanPoint, p.held.scanPoint, p.checkPoint, p.enabled])])
}

/** Residuals and RMS figures: millimetres to a tenth for metric readers, sixteenths of an inch otherwise. */
export function smallLength(metres: number | null | undefined, unit: LengthUnit): string {
  if (metres === null || metres === undefined || !Number.isFinite(metres)) return '—'
  return unit === 'ft-in' ? formatUncertainty(metres, unit) : formatLength(metres, 'mm')
}

/**
 * The tie pairs in the viewport: a dot on each side (in its placement's drawn position), a dashed line
 * between the two when both are in, and a label "tie 2" or "check 4" with the residual once fitted.
 */
export function tieViews(
  pairs: readonly TiePairDraft[],
  drawnMatrix: (instanceId: string) => readonly number[] | undefined,
  residuals: ReadonlyMap<number, number | null>,
  unit: LengthUnit,
): MarkerView[] {
  const views: MarkerView[] = []
  pairs.forEach((p, i) => {
    const colour = p.checkPoint ? CHECK_COLOUR : TIE_COLOUR
    const at = (s: TieSidePick | null): Vec3 | null => {
      if (!s) return null
      const m = drawnMatrix(s.instanceId)
      return m ? transformPoint(m, ...s.scanPoint) : null
    }
    const a = at(p.moving), b = at(p.held)
    const dots = [a, b].filter((x): x is Vec3 => x !== null).map((x) => ({ at: x, color: colour, hollow: !p.enabled }))
    if (dots.length === 0) return
    const r = residuals.get(p.key)
    views.push({
      id: `${TIE_VIEW_PREFIX}${p.key}`,
      color: colour,
      strokes: a && b ? [{ points: [a, b], closed: false, color: colour, dashed: true }] : [],
      fill: null,
      dots,
      label: {
        at: b ?? a!,
        title: `${p.checkPoint ? 'check' : 'tie'} ${i + 1}`,
        value: !p.enabled ? 'left out' : r === undefined || r === null ? (a && b ? '' : 'one side') : smallLength(r, unit),
        state: null,
        placement: 'above',
      },
    })
  })
  return views
}
