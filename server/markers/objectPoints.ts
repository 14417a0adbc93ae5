import type { CheckState } from '@shared/collab/states'
import { TrimShape, type TrimMode } from '@shared/schemas'
import type { Conn } from '../db'
import { HttpError } from '../errors'
import { compute, sharedFloat64Array } from '../compute/pool'
import { findObject, listSceneCuts, listTrimsOfObject, type TrimRow } from '../repositories/objects'
import { findScan } from '../repositories/scans'
import { listInstances } from '../repositories/scenes'
import type { PointFilter, ScanIndexes } from '../types'
import { keepsPoint } from '@shared/measure/trims'
import { tooManyPoints } from './checkParts'

/**
 * The points an object is made of, read once for every reader (a clearance's or a size's check, the object's
 * panel): each member placement's stored points, less its scene cuts, less what its own trims leave out (the
 * rule of shared/measure/trims.ts, in the placement's frame, so nothing is transformed before it is selected),
 * placed in the scene, then the stray points of the whole dropped (shared/measure/strayPoints.ts). A
 * placement named as the object (an older clearance's `objectInstanceId`) reads as a one-member object with no
 * trims of its own. Masks and the stray filter run in the compute threads.
 */

export interface ObjectMemberRead {
  instanceId: string
  scanId: string
  scanName: string
  stored: number
  /** Left out by the placement's scene cuts. */
  sceneCut: number
  /** Left out by the object's own trims of this member. */
  trimmed: number
  kept: number
}

export interface ObjectRead {
  name: string
  /** Kept points, scene frame, x y z (shared memory). */
  points: Float64Array
  /** With `around`: the points its own trims left out within that distance of the kept points' box, scene frame. */
  around: Float64Array
  members: ObjectMemberRead[]
  stray: { k: number; n: number; dropped: number; threshold: number } | null
}

export interface ObjectReadProblem {
  state: CheckState
  problem: string
}

type LocalTrim = { mode: TrimMode; shape: TrimShape }
const local = (rows: readonly TrimRow[]): LocalTrim[] => rows.map((t) => ({ mode: t.mode, shape: TrimShape.parse(t.shape) }))

/** The filter of a placement's scene cuts (scan frame), or undefined when it has none: for walks and snaps. */
export async function sceneCutFilters(db: Conn, instanceIds: readonly string[]): Promise<Map<string, PointFilter>> {
  return new Map([...(await sceneCutsOf(db, instanceIds))].map(([id, trims]) => [id, keepsPoint(trims)]))
}

/** A placement's scene cuts in its own frame (for snapping, sections and registration too). */
export async function sceneCutsOf(db: Conn, instanceIds: readonly string[]): Promise<Map<string, LocalTrim[]>> {
  const out = new Map<string, LocalTrim[]>()
  for (const t of await listSceneCuts(db, instanceIds)) out.set(t.instance_id, [...(out.get(t.instance_id) ?? []), ...local([t])])
  return out
}

export async function readObjectPoints(
  deps: { db: Conn; points: Pick<ScanIndexes, 'allPoints'> },
  sceneId: string,
  target: { objectId: string } | { instanceId: string },
  options: { maxPoints: number; around?: number; cancelled?: () => boolean },
): Promise<ObjectRead | ObjectReadProblem> {
  const instances = new Map((await listInstances(deps.db, sceneId)).map((i) => [i.id, i]))
  let name: string, memberIds: string[], own: TrimRow[] = [], stray: { k: number; n: number } | null = null
  if ('objectId' in target) {
    const object = await findObject(deps.db, target.objectId)
    if (!object || object.scene_id !== sceneId) return { state: 'invalid-geometry', problem: 'the object was deleted.' }
    name = object.name
    memberIds = object.members
    own = await listTrimsOfObject(deps.db, target.objectId)
    stray = object.stray
  } else {
    const placement = instances.get(target.instanceId)
    if (!placement) return { state: 'invalid-geometry', problem: 'the object: its placement is no longer in the scene.' }
    name = placement.scan_name
    memberIds = [target.instanceId]
  }
  if (!memberIds.length) return { state: 'invalid-geometry', problem: `the object “${name}” has no placements.` }
  const cuts = await sceneCutsOf(deps.db, memberIds)
  const cap = options.maxPoints
  const kept: Float64Array[] = [], outside: Float64Array[] = []
  const members: ObjectMemberRead[] = []
  let total = 0
  const box = { min: [Infinity, Infinity, Infinity], max: [-Infinity, -Infinity, -Infinity] }
  for (const id of memberIds) {
    const placement = instances.get(id)
    if (!placement) return { state: 'invalid-geometry', problem: `the object “${name}”: one of its placements is no longer in the scene.` }
    const scan = await findScan(deps.db, placement.scan_id)
    if (scan && (scan.status === 'queued' || scan.status === 'processing')) return { state: 'pending', problem: `the object “${name}”: its scan “${scan.name}” is still being processed.` }
    if (!scan || scan.status !== 'ready') return { state: 'invalid-geometry', problem: `the object “${name}”: its scan ${scan ? `“${scan.name}” failed to process` : 'was deleted'}.` }
    let xyz: Float64Array
    try {
      xyz = await deps.points.allPoints(placement.scan_id, cap)
    } catch (err) {
      // A scan marked ready with no tiles (nothing stored): a problem of this object, not a missing route.
      if (err instanceof HttpError && err.status === 404) return { state: 'invalid-geometry', problem: `the object “${name}”: its scan “${scan.name}” has no stored points.` }
      throw err
    }
    if (options.cancelled?.()) return { state: 'pending', problem: 'superseded by a newer change' }
    if (xyz.length / 3 > cap) return { state: 'invalid-geometry', problem: tooMany(`the object “${name}”: its scan “${scan.name}”`, cap) }
    const sceneCuts = cuts.get(id) ?? []
    const mine = local(own.filter((t) => t.instance_id === id))
    const count = xyz.length / 3
    const cutMask = sceneCuts.length ? await compute.trimMask(xyz, sceneCuts) : null
    const keepMask = mine.length ? await compute.trimMask(xyz, [...sceneCuts, ...mine]) : cutMask
    let nCut = 0, nKept = 0
    for (let i = 0; i < count; i++) {
      if (cutMask && !cutMask[i]) nCut++
      if (!keepMask || keepMask[i]) nKept++
    }
    total += nKept
    if (total > cap) return { state: 'invalid-geometry', problem: tooMany(`the object “${name}”`, cap) }
    const m = placement.matrix
    // Selected points placed in the scene, written straight into their array (no per-point allocation on a
    // million-point walk); the kept points' box is taken from that array afterwards.
    const inScene = (select: (i: number) => boolean, n: number, grow: boolean) => {
      const out = new Float64Array(3 * n)
      for (let i = 0, k = 0; i < count; i++) {
        if (!select(i)) continue
        const x = xyz[3 * i]!, y = xyz[3 * i + 1]!, z = xyz[3 * i + 2]!
        out[k++] = m[0]! * x + m[4]! * y + m[8]! * z + m[12]!
        out[k++] = m[1]! * x + m[5]! * y + m[9]! * z + m[13]!
        out[k++] = m[2]! * x + m[6]! * y + m[10]! * z + m[14]!
      }
      if (grow) {
        for (let k = 0; k < out.length; k += 3) {
          for (let a = 0; a < 3; a++) {
            const v = out[k + a]!
            if (v < box.min[a]!) box.min[a] = v
            if (v > box.max[a]!) box.max[a] = v
          }
        }
      }
      return out
    }
    kept.push(inScene((i) => !keepMask || keepMask[i] === 1, nKept, true))
    const nTrimmed = count - nCut - nKept
    if (options.around && nTrimmed > 0) outside.push(inScene((i) => keepMask![i] === 0 && (!cutMask || cutMask[i] === 1), nTrimmed, false))
    members.push({ instanceId: id, scanId: placement.scan_id, scanName: scan.name, stored: count, sceneCut: nCut, trimmed: nTrimmed, kept: nKept })
  }
  let points = sharedFloat64Array(3 * total)
  let at = 0
  for (const part of kept) points.set(part, at), (at += part.length)
  let strayRead: ObjectRead['stray'] = null
  if (stray && total > stray.k) {
    const found = await compute.strayPoints(points, stray.k, stray.n)
    if (found.dropped > 0) {
      const thinned = sharedFloat64Array(3 * (total - found.dropped))
      for (let i = 0, k = 0; i < total; i++) if (found.keep[i]) (thinned[k++] = points[3 * i]!), (thinned[k++] = points[3 * i + 1]!), (thinned[k++] = points[3 * i + 2]!)
      points = thinned
    }
    strayRead = { k: stray.k, n: stray.n, dropped: found.dropped, threshold: found.threshold }
  }
  let around: Float64Array = new Float64Array(0)
  if (options.around && outside.length && total > 0) {
    const r = options.around
    const near = (p: Float64Array, i: number) => [0, 1, 2].every((a) => p[3 * i + a]! >= box.min[a]! - r && p[3 * i + a]! <= box.max[a]! + r)
    const picked: number[] = []
    for (const part of outside) for (let i = 0; i < part.length / 3; i++) if (near(part, i)) picked.push(part[3 * i]!, part[3 * i + 1]!, part[3 * i + 2]!)
    around = sharedFloat64Array(picked.length)
    around.set(picked)
  }
  return { name, points, around, members, stray: strayRead }
}

const tooMany = (what: string, cap: number) => tooManyPoints(what, cap, 'trim it to the object (or thin the scan) first')
