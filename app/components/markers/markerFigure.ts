/**
 * Pure geometry of a section or clearance figure (MarkerFigure.vue). Inputs are the section's own 2D frame in
 * metres: u to the right, v up, rings and samples as interleaved u v pairs. SVG's y runs down, so the figure
 * draws v as y = -v; viewBoxes here are already in that flipped frame. Pixel sizes (strokes, text, ticks)
 * are turned into metres with the frame's metresPerPx, so the drawing scales as one piece when printed.
 */
import type { LengthUnit } from '@shared/format/units'

export type Uv = [number, number]

export interface Box {
  uMin: number
  uMax: number
  vMin: number
  vMax: number
}

/** The box round every finite u v pair of the given arrays, or null when there is none. */
export function boundsOf(arrays: readonly ArrayLike<number>[]): Box | null {
  let uMin = Infinity
  let uMax = -Infinity
  let vMin = Infinity
  let vMax = -Infinity
  for (const a of arrays) {
    for (let i = 0; i + 1 < a.length; i += 2) {
      const u = a[i]!
      const v = a[i + 1]!
      if (!Number.isFinite(u) || !Number.isFinite(v)) continue
      if (u < uMin) uMin = u
      if (u > uMax) uMax = u
      if (v < vMin) vMin = v
      if (v > vMax) vMax = v
    }
  }
  return uMin <= uMax ? { uMin, uMax, vMin, vMax } : null
}

/**
 * The part of a figure worth the space: the focus (an opening, an object) with `context` times its larger
 * side round it (at least `least` metres), kept within the box of everything drawn. Without a focus, all.
 */
export function focusBox(all: Box, focus: Box | null, context = 0.4, least = 0.3): Box {
  if (!focus) return all
  const pad = Math.max(least, context * Math.max(focus.uMax - focus.uMin, focus.vMax - focus.vMin))
  return {
    uMin: Math.max(all.uMin, focus.uMin - pad),
    uMax: Math.min(all.uMax, focus.uMax + pad),
    vMin: Math.max(all.vMin, focus.vMin - pad),
    vMax: Math.min(all.vMax, focus.vMax + pad),
  }
}

export interface FrameOptions {
  /** Largest drawing in CSS pixels. */
  maxWidth: number
  maxHeight: number
  /** White space round the data, pixels. */
  padPx: number
  /** A band under the data for the scale bar and the axes, pixels. */
  bottomPx: number
  /** A degenerate box (one point, a line) is widened to this many metres. */
  minSpan?: number
}

export interface FigureFrame {
  /** SVG viewBox [x, y, width, height] in metres, y = -v. */
  viewBox: [number, number, number, number]
  /** The drawing's natural size in pixels (same aspect as the viewBox). */
  width: number
  height: number
  metresPerPx: number
  /** The data box after widening (u v, metres). */
  data: Box
}

/**
 * One scale for u and v (a figure is never stretched): the largest that fits the data in the pixel box,
 * with padding round it and the bottom band below it.
 */
export function fitViewBox(box: Box, options: FrameOptions): FigureFrame {
  const minSpan = options.minSpan ?? 0.05
  const widen = (lo: number, hi: number): [number, number] => {
    const span = hi - lo
    if (span >= minSpan) return [lo, hi]
    const mid = (lo + hi) / 2
    return [mid - minSpan / 2, mid + minSpan / 2]
  }
  const [uMin, uMax] = widen(box.uMin, box.uMax)
  const [vMin, vMax] = widen(box.vMin, box.vMax)
  const availableW = Math.max(1, options.maxWidth - 2 * options.padPx)
  const availableH = Math.max(1, options.maxHeight - 2 * options.padPx - options.bottomPx)
  const pxPerM = Math.min(availableW / (uMax - uMin), availableH / (vMax - vMin))
  const width = (uMax - uMin) * pxPerM + 2 * options.padPx
  const height = (vMax - vMin) * pxPerM + 2 * options.padPx + options.bottomPx
  const m = 1 / pxPerM
  return {
    viewBox: [uMin - options.padPx * m, -vMax - options.padPx * m, width * m, height * m],
    width,
    height,
    metresPerPx: m,
    data: { uMin, uMax, vMin, vMax },
  }
}

/** Round scale-bar lengths, metres: the metric steps, and 3 in, 6 in, 1 ft, 2 ft, 5 ft for feet and inches. */
export const SCALE_BAR_METRES = [0.1, 0.2, 0.5, 1, 2] as const
export const SCALE_BAR_FEET_INCHES = [0.0762, 0.1524, 0.3048, 0.6096, 1.524] as const

/** The longest round length no longer than `fraction` of the span, else the shortest one. */
export function scaleBarLength(span: number, unit: LengthUnit, fraction = 0.3): number {
  const steps = unit === 'ft-in' ? SCALE_BAR_FEET_INCHES : SCALE_BAR_METRES
  const target = span * fraction
  let best: number = steps[0]
  for (const s of steps) if (s <= target + 1e-12) best = s
  return best
}

export interface Dimension {
  /** The dimension line's ends (after the offset), u v. */
  from: Uv
  to: Uv
  length: number
  /** Where its value is written, and the text's turn in degrees counter-clockwise from u (kept within -90..90 so it reads). */
  label: Uv
  angle: number
  /** Two short 45 degree strokes, one at each end (drafting ticks). */
  ticks: [Uv, Uv][]
  /** Extension lines from the measured points to the offset ends; empty without an offset. */
  extensions: [Uv, Uv][]
}

/**
 * A dimension line from a to b, moved sideways by `offset` (metres, to the left of a -> b), with ticks of
 * `tick` metres and its value `gap` metres off the line on the side that reads as "above", `labelAt` of the
 * way along (default the middle). Null when a and b coincide (no direction to draw along).
 */
export function dimensionLine(a: Uv, b: Uv, options: { tick: number; gap: number; offset?: number; labelAt?: number }): Dimension | null {
  const du = b[0] - a[0]
  const dv = b[1] - a[1]
  const length = Math.hypot(du, dv)
  if (!(length > 1e-12) || !Number.isFinite(length)) return null
  const d: Uv = [du / length, dv / length]
  const left: Uv = [-d[1], d[0]]
  const offset = options.offset ?? 0
  const from: Uv = [a[0] + left[0] * offset, a[1] + left[1] * offset]
  const to: Uv = [b[0] + left[0] * offset, b[1] + left[1] * offset]
  // Text reads left to right: flip the direction when it points leftwards (or straight down).
  const readable: Uv = d[0] < -1e-12 || (Math.abs(d[0]) <= 1e-12 && d[1] < 0) ? [-d[0], -d[1]] : d
  const up: Uv = [-readable[1], readable[0]]
  // Where along the line its value goes (0 at a, 1 at b): moved off the middle where two lines cross there.
  const f = options.labelAt ?? 0.5
  const mid: Uv = [from[0] + (to[0] - from[0]) * f, from[1] + (to[1] - from[1]) * f]
  const h = options.tick / 2
  // A 45 degree tick: half along the line, half across it.
  const t: Uv = [((d[0] + left[0]) * h) / Math.SQRT2, ((d[1] + left[1]) * h) / Math.SQRT2]
  const tickAt = (p: Uv): [Uv, Uv] => [
    [p[0] - t[0], p[1] - t[1]],
    [p[0] + t[0], p[1] + t[1]],
  ]
  return {
    from,
    to,
    length,
    label: [mid[0] + up[0] * options.gap, mid[1] + up[1] * options.gap],
    angle: (Math.atan2(readable[1], readable[0]) * 180) / Math.PI,
    ticks: [tickAt(from), tickAt(to)],
    extensions: offset === 0 ? [] : [
      [a, from],
      [b, to],
    ],
  }
}

/**
 * Where the line u = at (axis 'u') or v = at (axis 'v') crosses a closed ring: the crossing pair (inside
 * stretch, even-odd) that holds `near`, else the one whose middle is nearest to it. Returns the other
 * coordinate's [low, high], or null when the line misses the ring.
 */
export function chordThrough(ring: ArrayLike<number>, axis: 'u' | 'v', at: number, near: number): [number, number] | null {
  const n = ring.length >> 1
  if (n < 3) return null
  const fixed = axis === 'u' ? 0 : 1
  const free = 1 - fixed
  const hits: number[] = []
  for (let i = 0; i < n; i++) {
    const j = (i + 1) % n
    const p = ring[2 * i + fixed]!
    const q = ring[2 * j + fixed]!
    // Half-open rule: a vertex exactly on the line counts once.
    if (p <= at !== q <= at) {
      const s = (at - p) / (q - p)
      hits.push(ring[2 * i + free]! + s * (ring[2 * j + free]! - ring[2 * i + free]!))
    }
  }
  if (hits.length < 2) return null
  hits.sort((x, y) => x - y)
  let best: [number, number] | null = null
  let bestDistance = Infinity
  for (let k = 0; k + 1 < hits.length; k += 2) {
    const lo = hits[k]!
    const hi = hits[k + 1]!
    const distance = near >= lo && near <= hi ? -1 : Math.abs((lo + hi) / 2 - near)
    if (distance < bestDistance) {
      bestDistance = distance
      best = [lo, hi]
    }
  }
  return best
}

/** A stretch of `length` centred on a chord (a stated width drawn where it was measured). */
export function centredSpan(chord: [number, number], length: number): [number, number] {
  const mid = (chord[0] + chord[1]) / 2
  return [mid - length / 2, mid + length / 2]
}

/** SVG polygon points of a u v ring, flipped (y = -v). */
export function pointsAttr(ring: ArrayLike<number>): string {
  const out: string[] = []
  for (let i = 0; i + 1 < ring.length; i += 2) out.push(`${num(ring[i]!)},${num(-ring[i + 1]!)}`)
  return out.join(' ')
}

/**
 * Many small dots as one path: each point a zero-length segment, drawn with a round line cap (SVG 1.1
 * section 11.4: zero-length subpaths with round caps paint a dot). One element instead of thousands.
 */
export function dotsPath(uv: ArrayLike<number>): string {
  const out: string[] = []
  for (let i = 0; i + 1 < uv.length; i += 2) {
    const u = uv[i]!
    const v = uv[i + 1]!
    if (Number.isFinite(u) && Number.isFinite(v)) out.push(`M${num(u)} ${num(-v)}h0`)
  }
  return out.join('')
}

/** Short numbers for SVG text (a tenth of a millimetre is finer than any figure shows). */
function num(x: number): string {
  return String(Math.round(x * 1e5) / 1e5)
}

/** A point in u v to SVG coordinates. */
export function svg(p: Uv): Uv {
  return [p[0], -p[1]]
}

/** What a plane figure draws: a section's points and opening, and a clearance's silhouette through it. */
export interface MarkerFigureData {
  section: import('@shared/schemas').SectionFigure | null
  clearance: import('@shared/schemas').ClearanceResult | null
}
