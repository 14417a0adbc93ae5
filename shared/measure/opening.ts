import type { CellGrid } from './grid'
import { concaveOutline, convexHull } from './polygon'
import { minimumWidth } from './calipers'

/**
 * Free opening: the empty region around a seed point in a section's 2D points (a doorway, a window, a
 * hatch seen in a section through its wall).
 *
 * Units and frame: metres, the section's 2D frame from slab.ts (u to the right, v up for a wall plane);
 * uv is interleaved u v pairs, seed is [u, v].
 *
 * Method (common practice for raster free-space analysis, no single source):
 * 1. Rasterise the points' extents plus a margin on square cells of side `cell` (default spacing / 2).
 * 2. Block every cell whose centre lies within the clearance radius r (default: the point spacing) of any
 *    point. Neighbouring points at most 2r apart, so at most one spacing apart with the default, close the
 *    gap between them: the scan surface becomes a wall of blocked cells.
 * 3. Flood-fill (4-connected) from the seed's cell over free cells. A fill that reaches the grid's border
 *    leaks out: the opening is not closed ('not-enclosed'; a seed outside the grid reads the same). A seed in
 *    a blocked cell gives 'seed-on-points'.
 * 4. From the filled region: its cells, outline (concave outline of the region's boundary-cell corners,
 *    polygon.ts), area (cells x cell^2), extents (cell edges), clear width (the smallest longest-run
 *    horizontal extent over the rows of the middle half of the region's height, at least `bandCells` rows
 *    off the top and bottom: for a doorway, the narrowest gap between the jambs; under an arched head the
 *    rows of the top quarter narrow towards the crown and are left out, and so is a narrowing in the
 *    lowest quarter, which the outline still shows), clear height (the
 *    smallest longest-run vertical extent over the columns of the middle half of the region), centre height
 *    (the vertical extent of the middle column: for an arched head, the crown), and the minimum width of
 *    the region's convex hull (rotating calipers, calipers.ts).
 *
 * Resolution and bias: the region is the true opening shrunk by r on every side, so every extent here is
 * biased small by 2r; add `correction` = 2r to a width or height for the surface-to-surface value (the
 * `...Corrected` fields do). Each edge is then found within about one cell, plus up to
 * r - sqrt(r^2 - (s/2)^2) (s the spacing) where the blocked edge scallops between points, plus the points'
 * noise: `resolution` = cell + r - sqrt(r^2 - (s/2)^2) for a width (two edges, each within half a cell).
 * Limits: openings narrower than about 2r + 2 cells vanish; gaps in the scan wider than 2r leak; islands of
 * points inside the opening make holes that the extents ignore (the longest run is used per row and column).
 */

export interface OpeningOptions {
  /** Clearance radius r around each point, metres (default: spacing). */
  radius?: number
  /** Cell side, metres (default: spacing / 2). */
  cell?: number
  /** Free margin added round the points' extents, metres (default: r + 2 cells). */
  margin?: number
  /** Rows left off at the top and bottom for the clear width (default 1). */
  bandCells?: number
  /** Largest grid accepted (default 2e7 cells). */
  maxCells?: number
}

export interface FreeOpening {
  ok: true
  grid: CellGrid
  /** 1 for the cells of the free region, row by row (index i + j nu). */
  region: Uint8Array
  cellCount: number
  spacing: number
  radius: number
  /** The section points the opening was found in (the same array, not a copy). */
  points: Float64Array
  /** Anticlockwise ring round the region, metres. */
  outline: Float64Array
  /** Region area, square metres (biased small by about r times the perimeter). */
  area: number
  extents: { uMin: number; uMax: number; vMin: number; vMax: number }
  /** Narrowest row extent and the v of that row's centre. */
  clearWidth: number
  clearWidthAtV: number
  /** Lowest column extent in the middle half and the u of that column's centre. */
  clearHeight: number
  clearHeightAtU: number
  /** Vertical extent of the middle column. */
  centreHeight: number
  /** Minimum width of the region's convex hull (rotating calipers). */
  hullWidth: number
  /** 2r: add to a width or height for the value between surfaces. */
  correction: number
  clearWidthCorrected: number
  clearHeightCorrected: number
  centreHeightCorrected: number
  /** Per width or height, metres, after the correction (see header). */
  resolution: number
}

export type OpeningResult =
  | FreeOpening
  | {
      ok: false
      reason:
        | 'too-few-points'
        | 'not-finite'
        | 'invalid-spacing'
        | 'invalid-options'
        | 'grid-too-large'
        | 'seed-on-points'
        | 'not-enclosed'
    }

/** Longest run of region cells along a line of `count` cells starting at `start`, step `stride`. */
function longestRun(region: Uint8Array, start: number, stride: number, count: number): number {
  let best = 0, run = 0
  for (let c = 0, idx = start; c < count; c++, idx += stride) {
    if (region[idx]) {
      run++
      if (run > best) best = run
    } else run = 0
  }
  return best
}

export function freeOpening(
  uv: Float64Array,
  seed: [number, number],
  spacing: number,
  options: OpeningOptions = {},
): OpeningResult {
  const n = uv.length >> 1
  if (n < 3) return { ok: false, reason: 'too-few-points' }
  if (!(Number.isFinite(spacing) && spacing > 0)) return { ok: false, reason: 'invalid-spacing' }
  if (!(Number.isFinite(seed[0]) && Number.isFinite(seed[1]))) return { ok: false, reason: 'not-finite' }
  const r = options.radius ?? spacing
  const cell = options.cell ?? spacing / 2
  const band = options.bandCells ?? 1
  const maxCells = options.maxCells ?? 2e7
  if (!(Number.isFinite(r) && r > 0 && Number.isFinite(cell) && cell > 0 && Number.isInteger(band) && band >= 0))
    return { ok: false, reason: 'invalid-options' }
  const margin = options.margin ?? r + 2 * cell
  if (!(Number.isFinite(margin) && margin >= 0)) return { ok: false, reason: 'invalid-options' }

  let uMin = Infinity, uMax = -Infinity, vMin = Infinity, vMax = -Infinity
  for (let p = 0; p < n; p++) {
    const u = uv[2 * p]!, v = uv[2 * p + 1]!
    if (!(Number.isFinite(u) && Number.isFinite(v))) return { ok: false, reason: 'not-finite' }
    if (u < uMin) uMin = u
    if (u > uMax) uMax = u
    if (v < vMin) vMin = v
    if (v > vMax) vMax = v
  }
  const u0 = uMin - margin, v0 = vMin - margin
  const nu = Math.ceil((uMax + margin - u0) / cell) + 1
  const nv = Math.ceil((vMax + margin - v0) / cell) + 1
  if (nu * nv > maxCells) return { ok: false, reason: 'grid-too-large' }
  const grid: CellGrid = { u0, v0, cell, nu, nv }

  // 1 = blocked.
  const blocked = new Uint8Array(nu * nv)
  const r2 = r * r
  const reach = Math.ceil(r / cell) + 1
  for (let p = 0; p < n; p++) {
    const u = uv[2 * p]!, v = uv[2 * p + 1]!
    const ic = Math.floor((u - u0) / cell), jc = Math.floor((v - v0) / cell)
    const iLo = Math.max(0, ic - reach), iHi = Math.min(nu - 1, ic + reach)
    const jLo = Math.max(0, jc - reach), jHi = Math.min(nv - 1, jc + reach)
    for (let j = jLo; j <= jHi; j++) {
      const dv = v0 + (j + 0.5) * cell - v
      const dv2 = dv * dv
      if (dv2 > r2) continue
      const row = j * nu
      for (let i = iLo; i <= iHi; i++) {
        const du = u0 + (i + 0.5) * cell - u
        if (du * du + dv2 <= r2) blocked[row + i] = 1
      }
    }
  }

  const si = Math.floor((seed[0] - u0) / cell), sj = Math.floor((seed[1] - v0) / cell)
  if (si < 0 || sj < 0 || si >= nu || sj >= nv) return { ok: false, reason: 'not-enclosed' }
  const start = si + sj * nu
  if (blocked[start]) return { ok: false, reason: 'seed-on-points' }

  const region = new Uint8Array(nu * nv)
  const stack = new Int32Array(nu * nv)
  let top = 0
  stack[top++] = start
  region[start] = 1
  let count = 0
  let iLo = nu, iHi = -1, jLo = nv, jHi = -1
  while (top > 0) {
    const c = stack[--top]!
    count++
    const i = c % nu, j = (c - i) / nu
    if (i === 0 || j === 0 || i === nu - 1 || j === nv - 1) return { ok: false, reason: 'not-enclosed' }
    if (i < iLo) iLo = i
    if (i > iHi) iHi = i
    if (j < jLo) jLo = j
    if (j > jHi) jHi = j
    const next = [c - 1, c + 1, c - nu, c + nu]
    for (const d of next) {
      if (!blocked[d] && !region[d]) {
        region[d] = 1
        stack[top++] = d
      }
    }
  }

  // Clear width: rows of the middle half (like the clear height's columns), so an arched or sloping head does
  // not make the narrowest row the one under the crown; all rows when the region is too low for that.
  const rowQuarter = Math.floor((jHi - jLo + 1) / 4)
  let rowA = Math.max(jLo + band, jLo + rowQuarter), rowB = Math.min(jHi - band, jHi - rowQuarter)
  if (rowA > rowB) (rowA = jLo), (rowB = jHi)
  let widthCells = Infinity, widthRow = rowA
  for (let j = rowA; j <= rowB; j++) {
    const w = longestRun(region, iLo + j * nu, 1, iHi - iLo + 1)
    if (w > 0 && w < widthCells) (widthCells = w), (widthRow = j)
  }
  // Clear height: columns of the middle half.
  const quarter = Math.floor((iHi - iLo + 1) / 4)
  let heightCells = Infinity, heightCol = iLo + quarter
  for (let i = iLo + quarter; i <= iHi - quarter; i++) {
    const h = longestRun(region, i + jLo * nu, nu, jHi - jLo + 1)
    if (h > 0 && h < heightCells) (heightCells = h), (heightCol = i)
  }
  const mid = Math.round((iLo + iHi) / 2)
  const centreCells = longestRun(region, mid + jLo * nu, nu, jHi - jLo + 1)

  // Boundary cells' corners (deduplicated) for the outline and the hull.
  const seen = new Set<number>()
  const corners: number[] = []
  for (let j = jLo; j <= jHi; j++) {
    for (let i = iLo; i <= iHi; i++) {
      const c = i + j * nu
      if (!region[c]) continue
      if (region[c - 1] && region[c + 1] && region[c - nu] && region[c + nu]) continue
      for (let dj = 0; dj <= 1; dj++) {
        for (let di = 0; di <= 1; di++) {
          const key = i + di + (j + dj) * (nu + 1)
          if (seen.has(key)) continue
          seen.add(key)
          corners.push(u0 + (i + di) * cell, v0 + (j + dj) * cell)
        }
      }
    }
  }
  const cornerXY = Float64Array.from(corners)
  const concave = concaveOutline(cornerXY, cell)
  const hull = convexHull(cornerXY)
  if (!hull.ok) return { ok: false, reason: 'too-few-points' } // unreachable: one cell has 4 corners
  const outline = concave.ok ? concave.xy : hull.xy
  const width = minimumWidth(cornerXY)

  const correction = 2 * r
  const half = spacing / 2
  const scallop = half < r ? r - Math.sqrt(r * r - half * half) : r
  const clearWidth = widthCells * cell, clearHeight = heightCells * cell, centreHeight = centreCells * cell
  return {
    ok: true,
    grid,
    region,
    cellCount: count,
    spacing,
    radius: r,
    points: uv,
    outline,
    area: count * cell * cell,
    extents: { uMin: u0 + iLo * cell, uMax: u0 + (iHi + 1) * cell, vMin: v0 + jLo * cell, vMax: v0 + (jHi + 1) * cell },
    clearWidth,
    clearWidthAtV: v0 + (widthRow + 0.5) * cell,
    clearHeight,
    clearHeightAtU: u0 + (heightCol + 0.5) * cell,
    centreHeight,
    hullWidth: width.ok ? width.width : 0,
    correction,
    clearWidthCorrected: clearWidth + correction,
    clearHeightCorrected: clearHeight + correction,
    centreHeightCorrected: centreHeight + correction,
    resolution: cell + scallop,
  }
}
