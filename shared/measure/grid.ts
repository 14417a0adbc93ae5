/**
 * Square cell grid over a section's 2D frame and an exact Euclidean distance transform on it.
 *
 * Units: metres in the section's 2D frame (u to the right, v up for a wall plane; see slab.ts). Cell (i, j)
 * covers u0 + i cell <= u < u0 + (i + 1) cell, v0 + j cell <= v < v0 + (j + 1) cell; its centre is at
 * (u0 + (i + 0.5) cell, v0 + (j + 0.5) cell). Cells are stored row by row: index = i + j nu.
 *
 * Distance transform: exact squared Euclidean distance between cell centres, separable lower-envelope-of-
 * parabolas method of Felzenszwalb and Huttenlocher 2012, "Distance Transforms of Sampled Functions",
 * Theory of Computing 8, 415-428 (published): one 1D pass down every column, then one along every row,
 * O(nu nv). Distances are in cell units squared; a grid without any target cell gives Infinity everywhere.
 */

export interface CellGrid {
  u0: number
  v0: number
  cell: number
  nu: number
  nv: number
}

/** A large finite stand-in for infinity inside the transform (Infinity - Infinity would give NaN). */
const FAR = 1e20

/** 1D squared distance transform of f (length n) into d; v, z are scratch (n and n + 1 long). */
function transform1d(f: Float64Array, n: number, d: Float64Array, v: Int32Array, z: Float64Array): void {
  let k = 0
  v[0] = 0
  z[0] = -Infinity
  z[1] = Infinity
  for (let q = 1; q < n; q++) {
    let p = v[k]!
    let s = (f[q]! + q * q - (f[p]! + p * p)) / (2 * (q - p))
    while (s <= z[k]!) {
      k--
      p = v[k]!
      s = (f[q]! + q * q - (f[p]! + p * p)) / (2 * (q - p))
    }
    k++
    v[k] = q
    z[k] = s
    z[k + 1] = Infinity
  }
  k = 0
  for (let q = 0; q < n; q++) {
    while (z[k + 1]! < q) k++
    const p = v[k]!
    d[q] = (q - p) * (q - p) + f[p]!
  }
}

/**
 * Squared distance (cell units squared) from every cell centre to the nearest cell centre whose mask value
 * equals `target`. Cells that are targets get 0.
 */
export function squaredDistanceTransform(mask: Uint8Array, nu: number, nv: number, target: number): Float64Array {
  const out = new Float64Array(nu * nv)
  for (let c = 0; c < out.length; c++) out[c] = mask[c] === target ? 0 : FAR
  const n = Math.max(nu, nv)
  const f = new Float64Array(n), d = new Float64Array(n), v = new Int32Array(n), z = new Float64Array(n + 1)
  for (let i = 0; i < nu; i++) {
    for (let j = 0; j < nv; j++) f[j] = out[i + j * nu]!
    transform1d(f, nv, d, v, z)
    for (let j = 0; j < nv; j++) out[i + j * nu] = d[j]!
  }
  for (let j = 0; j < nv; j++) {
    const row = j * nu
    for (let i = 0; i < nu; i++) f[i] = out[row + i]!
    transform1d(f, nu, d, v, z)
    for (let i = 0; i < nu; i++) out[row + i] = d[i]! >= FAR / 2 ? Infinity : d[i]!
  }
  return out
}
