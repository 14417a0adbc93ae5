import { decodeTile } from '@shared/points/tileFormat'
import type { Conn } from '../../db'
import { getTilesForSearch, listTiles } from '../../repositories/scans'
import { ExportError, type ExportBatch } from '../writers/sink'
import { keepsPoint } from '@shared/measure/trims'
import { strayPoints } from '@shared/measure/strayPoints'
import { TrimShape } from '@shared/schemas'
import { sceneCutsOf } from '../../markers/objectPoints'
import { findObject, listTrimsOfObject, type TrimRow } from '../../repositories/objects'

/**
 * What an export reads: the placements of its source, each with its scan, matrix and point filter, and their
 * points tile by tile from the stored octree (every point is in exactly one node), fetched in groups of
 * about 8 MiB, so memory stays at two groups whatever the scene's size.
 *
 * Sources are a scene (every placement, hidden ones too), one placement, or an object (its member placements).
 * Trims plug in through `PlacementPart.keep`, the one point filter per placement, applied in the scan's own
 * frame before anything is counted or written: every placement's scene cuts, and for an object its members'
 * own trims (shared/measure/trims.ts, the rule every reader uses) and its stray points (found once over the
 * whole object, shared/measure/strayPoints.ts, then dropped point by point).
 */
export type ExportSource = { kind: 'scene'; sceneId: string } | { kind: 'placement'; sceneId: string; instanceId: string } | { kind: 'object'; sceneId: string; objectId: string }

/** Keeps a point (scan frame, metres) or drops it. */
export type PointFilter = (x: number, y: number, z: number) => boolean

export interface PlacementPart {
  instanceId: string
  scanId: string
  scanName: string
  /** Column-major rigid 4x4 from the scan's frame to the scene's. */
  matrix: number[]
  colors: boolean
  intensities: boolean
  /** Points stored in the scan's tiles (before the filter). */
  storedPoints: number
  /** The trims' seam: null keeps every point. */
  keep: PointFilter | null
}

export async function resolveParts(db: Conn, source: ExportSource): Promise<PlacementPart[]> {
  let members: string[] | null = null
  let own: TrimRow[] = []
  let stray: { k: number; n: number } | null = null
  if (source.kind === 'object') {
    const object = await findObject(db, source.objectId)
    if (!object || object.scene_id !== source.sceneId) throw new ExportError('The object to export was deleted.')
    members = object.members
    own = await listTrimsOfObject(db, source.objectId)
    stray = object.stray
    if (!members.length) throw new ExportError('The object has no placements to export.')
  }
  let query = db
    .selectFrom('scene_instances as i')
    .innerJoin('scans as s', 's.id', 'i.scan_id')
    .select(['i.id', 'i.scan_id', 'i.matrix', 's.name', 's.status', 's.point_count', 's.attributes'])
    .where('i.scene_id', '=', source.sceneId)
  if (source.kind === 'placement') query = query.where('i.id', '=', source.instanceId)
  if (members) query = query.where('i.id', 'in', members)
  const rows = await query.orderBy('i.created_at').orderBy('i.id').execute()
  if (rows.length === 0) throw new ExportError(source.kind === 'placement' ? 'The placement to export is no longer in the scene.' : source.kind === 'object' ? 'The object’s placements are no longer in the scene.' : 'The scene has no placements to export.')
  for (const r of rows) {
    if (r.status !== 'ready') throw new ExportError(`The scan '${r.name}' is ${r.status}; a scan can be exported once it is ready.`)
  }
  const cuts = await sceneCutsOf(db, rows.map((r) => r.id))
  const parts: PlacementPart[] = rows.map((r) => {
    const trims = [...(cuts.get(r.id) ?? []), ...own.filter((t) => t.instance_id === r.id).map((t) => ({ mode: t.mode, shape: TrimShape.parse(t.shape) }))]
    return {
      instanceId: r.id,
      scanId: r.scan_id,
      scanName: r.name,
      matrix: r.matrix.map(Number),
      colors: r.attributes?.color === true,
      intensities: r.attributes?.intensity === true,
      storedPoints: Number(r.point_count ?? 0),
      keep: trims.length ? keepsPoint(trims) : null,
    }
  })
  if (stray) await dropStrays(db, parts, stray)
  return parts
}

/**
 * An object's stray points: its kept points read once (scene frame), the filter run over all of them, and each
 * part's filter then also drops the points found stray (matched exactly in the scan's frame: the same tiles
 * decode to the same doubles).
 */
async function dropStrays(db: Conn, parts: PlacementPart[], stray: { k: number; n: number }): Promise<void> {
  const scene: number[] = [], local: number[] = [], owner: number[] = []
  for (const [p, part] of parts.entries()) {
    await forEachBatch(db, part, 'scan', async (batch) => {
      const m = part.matrix
      for (let i = 0; i < batch.count; i++) {
        const x = batch.positions[3 * i]!, y = batch.positions[3 * i + 1]!, z = batch.positions[3 * i + 2]!
        local.push(x, y, z)
        scene.push(m[0]! * x + m[4]! * y + m[8]! * z + m[12]!, m[1]! * x + m[5]! * y + m[9]! * z + m[13]!, m[2]! * x + m[6]! * y + m[10]! * z + m[14]!)
        owner.push(p)
      }
    })
  }
  if (owner.length <= stray.k) return
  const found = strayPoints(Float64Array.from(scene), stray.k, stray.n)
  if (found.dropped === 0) return
  const dropped = parts.map(() => new Map<number, [number, number][]>())
  for (let i = 0; i < owner.length; i++) {
    if (found.keep[i]) continue
    const byX = dropped[owner[i]!]!
    byX.set(local[3 * i]!, [...(byX.get(local[3 * i]!) ?? []), [local[3 * i + 1]!, local[3 * i + 2]!]])
  }
  for (const [p, part] of parts.entries()) {
    const byX = dropped[p]!
    if (byX.size === 0) continue
    const trims = part.keep
    part.keep = (x, y, z) => (!trims || trims(x, y, z)) && !(byX.get(x)?.some(([dy, dz]) => dy === y && dz === z) ?? false)
  }
}

/**
 * Calls `onBatch` with the placement's points one stored tile at a time: in the scan's frame, or with the
 * placement's matrix applied (`frame: 'scene'`). Returns the points passed on. Each batch has arrays of its
 * own.
 */
export async function forEachBatch(db: Conn, part: PlacementPart, frame: 'scan' | 'scene', onBatch: (batch: ExportBatch, stored: number) => Promise<void>): Promise<number> {
  const tiles = await listTiles(db, part.scanId)
  // Tiles come a group at a time (one query, base64: faster than bytea's hex text, see getTilesForSearch),
  // the next group fetched while this one is written: at most two groups of about GROUP_BYTES in memory.
  const groups: string[][] = []
  let bytes = Infinity
  for (const tile of tiles) {
    if (bytes + tile.byte_size > GROUP_BYTES) {
      groups.push([])
      bytes = 0
    }
    groups.at(-1)!.push(tile.node_key)
    bytes += tile.byte_size
  }
  const fetchGroup = (i: number) => (i < groups.length ? getTilesForSearch(db, part.scanId, groups[i]!) : Promise.resolve(new Map<string, Buffer>()))
  const [m0, m1, m2, , m4, m5, m6, , m8, m9, m10, , m12, m13, m14] = part.matrix as [number, number, number, number, number, number, number, number, number, number, number, number, number, number, number]
  let passed = 0
  let next = fetchGroup(0)
  for (let g = 0; g < groups.length; g++) {
    const fetched = await next
    next = fetchGroup(g + 1)
    // An unhandled rejection of the prefetch while this group is written would end the process: it is
    // awaited (and its error thrown) on the next turn.
    next.catch(() => {})
    for (const key of groups[g]!) {
      await emitTile(fetched.get(key), key)
    }
  }
  return passed

  async function emitTile(data: Buffer | undefined, key: string): Promise<void> {
    if (!data) throw new ExportError(`The scan '${part.scanName}' lost its stored points while exporting (node ${key}); it was probably processed again. Export again.`)
    const t = decodeTile(data)
    const positions = new Float64Array(t.count * 3)
    const colors = part.colors && t.colors ? new Uint8Array(t.count * 3) : null
    const intensities = part.intensities && t.intensities ? new Float32Array(t.count) : null
    const [ox, oy, oz] = t.origin
    const src = t.positions
    const srcColors = t.colors
    const srcIntensities = t.intensities
    let n = 0
    for (let i = 0; i < t.count; i++) {
      // Stored as float32 offsets from a float64 origin: the sum in doubles is the stored point exactly.
      const x = ox + src[i * 3]!
      const y = oy + src[i * 3 + 1]!
      const z = oz + src[i * 3 + 2]!
      if (part.keep && !part.keep(x, y, z)) continue
      if (frame === 'scene') {
        positions[n * 3] = m0 * x + m4 * y + m8 * z + m12
        positions[n * 3 + 1] = m1 * x + m5 * y + m9 * z + m13
        positions[n * 3 + 2] = m2 * x + m6 * y + m10 * z + m14
      } else {
        positions[n * 3] = x
        positions[n * 3 + 1] = y
        positions[n * 3 + 2] = z
      }
      if (colors) {
        colors[n * 3] = srcColors![i * 3]!
        colors[n * 3 + 1] = srcColors![i * 3 + 1]!
        colors[n * 3 + 2] = srcColors![i * 3 + 2]!
      }
      if (intensities) intensities[n] = srcIntensities![i]!
      n++
    }
    passed += n
    await onBatch({ count: n, positions: positions.subarray(0, n * 3), colors: colors?.subarray(0, n * 3) ?? null, intensities: intensities?.subarray(0, n) ?? null }, t.count)
  }
}

/** Tiles fetched per query, by their stored size. */
const GROUP_BYTES = 8 * 1024 * 1024
