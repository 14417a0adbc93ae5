/**
 * Stray points: statistical outlier removal as published by Rusu, Marton, Blodow, Dolha and Beetz 2008,
 * "Towards 3D point cloud based object maps for household environments", Robotics and Autonomous Systems
 * 56(11), section 4: for each point the mean distance d_i to its k nearest neighbours (the point itself
 * excluded; a duplicate of it at distance 0 counts as a neighbour); with mu and sigma the mean and standard
 * deviation of all d_i, a point is stray when d_i > mu + n sigma (strictly beyond: a point at the threshold
 * stays). sigma is the sample standard deviation (divisor N - 1), as the authors' published implementation
 * computes it (from memory; not re-checked against its source here).
 *
 * Units: metres, points interleaved x y z, any frame. Non-destructive: the result is a mask (1 = kept).
 * Fewer than k + 1 points: no point has k neighbours, so nothing is judged and every point is kept (mean, sd
 * and threshold 0).
 *
 * Nearest neighbours: an exact kd-tree of our own over typed arrays (median splits on the widest axis of each
 * node, leaves of at most LEAF points, best-first descent with a bounded sorted list of the k best), so a
 * million points take a few seconds on one core. Exact: the same means as a brute-force search.
 */

const LEAF = 12

export interface StrayResult {
  /** 1 for a kept point, 0 for a stray one; one byte per input point. */
  keep: Uint8Array
  dropped: number
  /** Mean and sample sd of the per-point mean neighbour distances (metres). */
  mean: number
  sd: number
  /** mean + n sd: a point whose mean neighbour distance exceeds it is stray (metres). */
  threshold: number
}

/** A static kd-tree: the points reordered so each node's points are contiguous, with each node's split axis. */
interface KdTree {
  /** Point coordinates in tree order, x y z interleaved. */
  pts: Float64Array
  /** Original index of each point in tree order. */
  order: Uint32Array
  /** Split axis and value of each inner node (implicit numbering: children of i are 2i+1 and 2i+2). */
  axis: Uint8Array
  split: Float64Array
}

/** Floyd-Rivest selection on ids[lo..hi] by coordinate `dim`, so ids[k] holds the k-th smallest. */
function select(ids: Uint32Array, xyz: Float64Array, k: number, lo: number, hi: number, dim: number): void {
  while (hi > lo) {
    if (hi - lo > 600) {
      const n = hi - lo + 1
      const m = k - lo + 1
      const z = Math.log(n)
      const s = 0.5 * Math.exp((2 * z) / 3)
      const sd = 0.5 * Math.sqrt((z * s * (n - s)) / n) * (m - n / 2 < 0 ? -1 : 1)
      select(ids, xyz, k, Math.max(lo, Math.floor(k - (m * s) / n + sd)), Math.min(hi, Math.floor(k + ((n - m) * s) / n + sd)), dim)
    }
    const t = xyz[3 * ids[k]! + dim]!
    let i = lo
    let j = hi
    swap(ids, lo, k)
    if (xyz[3 * ids[hi]! + dim]! > t) swap(ids, lo, hi)
    while (i < j) {
      swap(ids, i, j)
      i++
      j--
      while (xyz[3 * ids[i]! + dim]! < t) i++
      while (xyz[3 * ids[j]! + dim]! > t) j--
    }
    if (xyz[3 * ids[lo]! + dim]! === t) swap(ids, lo, j)
    else {
      j++
      swap(ids, j, hi)
    }
    if (j <= k) lo = j + 1
    if (k <= j) hi = j - 1
  }
}

function swap(a: Uint32Array, i: number, j: number): void {
  const t = a[i]!
  a[i] = a[j]!
  a[j] = t
}

function buildTree(xyz: Float64Array, n: number): KdTree {
  const ids = new Uint32Array(n)
  for (let i = 0; i < n; i++) ids[i] = i
  let nodes = 1
  for (let size = n; size > LEAF; size = Math.ceil(size / 2)) nodes = 2 * nodes + 1
  const axis = new Uint8Array(nodes)
  // The value is kept per node: a child's own selection later moves another point into position mid.
  const split = new Float64Array(nodes)
  // Explicit stack of (node, lo, hi) with hi exclusive.
  const stack: number[] = [0, 0, n]
  while (stack.length > 0) {
    const hi = stack.pop()!, lo = stack.pop()!, node = stack.pop()!
    if (hi - lo <= LEAF) continue
    let minX = Infinity, minY = Infinity, minZ = Infinity, maxX = -Infinity, maxY = -Infinity, maxZ = -Infinity
    for (let i = lo; i < hi; i++) {
      const p = 3 * ids[i]!
      const x = xyz[p]!, y = xyz[p + 1]!, z = xyz[p + 2]!
      if (x < minX) minX = x
      if (x > maxX) maxX = x
      if (y < minY) minY = y
      if (y > maxY) maxY = y
      if (z < minZ) minZ = z
      if (z > maxZ) maxZ = z
    }
    const ex = maxX - minX, ey = maxY - minY, ez = maxZ - minZ
    const dim = ex >= ey && ex >= ez ? 0 : ey >= ez ? 1 : 2
    axis[node] = dim
    const mid = (lo + hi) >> 1
    select(ids, xyz, mid, lo, hi - 1, dim)
    split[node] = xyz[3 * ids[mid]! + dim]!
    stack.push(2 * node + 1, lo, mid, 2 * node + 2, mid, hi)
  }
  const pts = new Float64Array(3 * n)
  for (let i = 0; i < n; i++) {
    const p = 3 * ids[i]!
    pts[3 * i] = xyz[p]!
    pts[3 * i + 1] = xyz[p + 1]!
    pts[3 * i + 2] = xyz[p + 2]!
  }
  return { pts, order: ids, axis, split }
}

/**
 * Mean distance from each point to its k nearest other points, in input order. A node holding [lo, hi) splits
 * at mid = (lo + hi) >> 1: points before mid are <= split[node] along axis[node], points from mid on >=.
 */
function meanNeighbourDistances(xyz: Float64Array, n: number, k: number): Float64Array {
  const { pts, order, axis, split } = buildTree(xyz, n)
  const means = new Float64Array(n)
  const best = new Float64Array(k) // squared distances, ascending
  // Stack entries: node, lo, hi, and the squared distance from the query to the node's side of the split.
  const sNode = new Int32Array(256), sLo = new Int32Array(256), sHi = new Int32Array(256)
  const sD = new Float64Array(256)
  for (let q = 0; q < n; q++) {
    const qx = pts[3 * q]!, qy = pts[3 * q + 1]!, qz = pts[3 * q + 2]!
    let count = 0
    let worst = Infinity
    let top = 0
    sNode[0] = 0
    sLo[0] = 0
    sHi[0] = n
    sD[0] = 0
    top = 1
    while (top > 0) {
      top--
      if (sD[top]! >= worst) continue
      let node = sNode[top]!, lo = sLo[top]!, hi = sHi[top]!
      // Descend to a leaf, pushing the far side of each split.
      while (hi - lo > LEAF) {
        const mid = (lo + hi) >> 1
        const dim = axis[node]!
        const diff = (dim === 0 ? qx : dim === 1 ? qy : qz) - split[node]!
        const d2 = diff * diff
        if (diff < 0) {
          sNode[top] = 2 * node + 2
          sLo[top] = mid
          sHi[top] = hi
          node = 2 * node + 1
          hi = mid
        } else {
          sNode[top] = 2 * node + 1
          sLo[top] = lo
          sHi[top] = mid
          node = 2 * node + 2
          lo = mid
        }
        sD[top] = d2
        top++
      }
      for (let j = lo; j < hi; j++) {
        if (j === q) continue
        const dx = pts[3 * j]! - qx, dy = pts[3 * j + 1]! - qy, dz = pts[3 * j + 2]! - qz
        const d2 = dx * dx + dy * dy + dz * dz
        if (count === k && d2 >= worst) continue
        let i = count < k ? count++ : k - 1
        while (i > 0 && best[i - 1]! > d2) {
          best[i] = best[i - 1]!
          i--
        }
        best[i] = d2
        if (count === k) worst = best[k - 1]!
      }
    }
    let sum = 0
    for (let i = 0; i < k; i++) sum += Math.sqrt(best[i]!)
    means[order[q]!] = sum / k
  }
  return means
}

/**
 * Statistical outlier removal (header): k neighbours (a whole number >= 1), n standard deviations (>= 0).
 * Throws a RangeError naming the bad argument.
 */
export function strayPoints(xyz: Float64Array, k: number, n: number): StrayResult {
  if (xyz.length % 3 !== 0) throw new RangeError(`stray points: points must be x y z triples: ${xyz.length} numbers is not a multiple of 3`)
  if (!Number.isInteger(k) || k < 1) throw new RangeError(`stray points: k must be a whole number of neighbours of at least 1, not ${k}`)
  if (!Number.isFinite(n) || n < 0) throw new RangeError(`stray points: n must be a finite number of standard deviations of at least 0, not ${n}`)
  const count = xyz.length / 3
  for (let i = 0; i < xyz.length; i++) {
    if (!Number.isFinite(xyz[i]!)) throw new RangeError(`stray points: point ${Math.floor(i / 3)} has a coordinate that is not a finite number`)
  }
  const keep = new Uint8Array(count).fill(1)
  if (count < k + 1) return { keep, dropped: 0, mean: 0, sd: 0, threshold: 0 }
  const means = meanNeighbourDistances(xyz, count, k)
  let mean = 0
  for (let i = 0; i < count; i++) mean += means[i]!
  mean /= count
  let ss = 0
  for (let i = 0; i < count; i++) ss += (means[i]! - mean) ** 2
  const sd = Math.sqrt(ss / (count - 1))
  const threshold = mean + n * sd
  let dropped = 0
  for (let i = 0; i < count; i++) {
    if (means[i]! > threshold) {
      keep[i] = 0
      dropped++
    }
  }
  return { keep, dropped, mean, sd, threshold }
}
