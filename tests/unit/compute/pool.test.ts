// The compute pool (server/compute/pool.ts): its tasks give what the shared/measure functions give when
// called directly (the same code on another thread: the direct call is the reference), a task that throws
// or kills its thread fails that one call, and a marker check whose computation fails or is superseded
// ends as the check's rules say.
import { afterAll, afterEach, describe, expect, it } from 'vitest'
import { fitThrough } from '@shared/measure/clearance'
import { fittedMargin, fittedOpening, fittedOutline } from '@shared/measure/edges'
import { freeOpening, type FreeOpening } from '@shared/measure/opening'
import { concaveOutline } from '@shared/measure/polygon'
import { strayPoints } from '@shared/measure/strayPoints'
import { trimMask } from '@shared/measure/trims'
import { TrimShape } from '@shared/schemas/objects'
import { closeComputePool, compute, ComputeTaskError, routeComputeTask, sharedFloat64Array } from '../../../server/compute/pool'
import { checkMarker, type CheckContext, type CheckInput } from '../../../server/markers/check'
import { boxSolid, wallWithOpening } from '../../utils/solids'
import { boxSilhouette, doorSection } from '../measure/noisyScenes'

const SECTION_ID = '00000000-0000-4000-8000-000000000001'
const WALL_ID = '00000000-0000-4000-8000-000000000002'
const BOX_ID = '00000000-0000-4000-8000-000000000003'
const FIXTURE = new URL('../../fixtures/compute/tasks.mjs', import.meta.url).href

afterEach(() => {
  for (const task of ['fittedOutline', 'concaveOutline'] as const) routeComputeTask(task, null)
})
afterAll(() => closeComputePool())

function inShared(a: Float64Array): Float64Array {
  const s = sharedFloat64Array(a.length)
  s.set(a)
  return s
}

describe('tasks in the pool', () => {
  const spacing = 0.01, noise = 0.002
  const uv = doorSection(0.9, 2.0, spacing, noise, 3)
  const direct = freeOpening(uv, [0, 1], spacing) as FreeOpening

  it('finds the same free opening and edge fits as the direct call (a section)', async () => {
    const pooled = await compute.freeOpening(inShared(uv), [0, 1], spacing)
    expect(direct.ok && pooled.ok).toBe(true)
    if (!pooled.ok) return
    for (const k of ['clearWidth', 'clearHeight', 'area', 'clearWidthAtV', 'clearHeightAtU', 'resolution'] as const) expect(pooled[k]).toBe(direct[k])
    expect(Array.from(pooled.outline)).toEqual(Array.from(direct.outline))
    expect(Array.from(pooled.region)).toEqual(Array.from(direct.region))
    expect(await compute.fittedOpening(pooled, noise)).toEqual(fittedOpening(direct, noise))
    // A plain (not shared) array is shared by the pool on the way: the same answer.
    expect(await compute.concaveOutline(uv, spacing)).toEqual(concaveOutline(uv, spacing))
  })

  it('fits an object through the opening with the same margin as the direct call (a clearance)', async () => {
    const silhouette = boxSilhouette(0.6, 0.4, 1.2, spacing, noise, 11)
    const outline = fittedOutline(silhouette, noise, spacing)
    const pooledOutline = await compute.fittedOutline(inShared(silhouette), noise, spacing)
    expect(pooledOutline).toEqual(outline)
    if (!outline.ok) throw new Error('outline')
    const fit = fitThrough(direct, outline.xy, 0, 0, { maxTurnDegrees: 0 })
    const pooledFit = await compute.fitThrough(direct, outline.xy, 0, 0, { maxTurnDegrees: 0 })
    expect(pooledFit).toEqual(fit)
    if (!fit.ok) throw new Error(fit.reason)
    const margin = fittedMargin(direct, fit.placed, noise)
    expect(await compute.fittedMargin(direct, fit.placed, noise)).toEqual(margin)
    // The door 0.900 m, the box 0.600 m wide: 0.150 m a side as it stands.
    expect(margin.ok && margin.margin).toBeCloseTo(0.15, 2)
  })

  it('keeps and drops the same points as the direct calls (trims and stray points)', async () => {
    const xyz = Float64Array.from(boxSolid(0.6, 0.4, 1.2, 0.02).xyz)
    const trims = [
      { mode: 'keep' as const, shape: TrimShape.parse({ shape: 'box', centre: [0, 0, 0.6], size: [0.5, 2, 2], rotation: [0, 0, 0.2, 1] }) },
      { mode: 'cut' as const, shape: TrimShape.parse({ shape: 'below', point: [0, 0, 0.1] }) },
    ]
    const mask = trimMask(xyz, trims)
    expect(Array.from(await compute.trimMask(inShared(xyz), trims))).toEqual(Array.from(mask))
    const stray = strayPoints(xyz, 8, 2)
    const pooled = await compute.strayPoints(inShared(xyz), 8, 2)
    expect({ ...pooled, keep: Array.from(pooled.keep) }).toEqual({ ...stray, keep: Array.from(stray.keep) })
  })

  it('fails the one call whose task throws or whose thread dies, and keeps answering', async () => {
    routeComputeTask('concaveOutline', { filename: FIXTURE, name: 'fail' })
    const thrown = await compute.concaveOutline(uv, spacing).catch((e: unknown) => e)
    expect(thrown).toBeInstanceOf(ComputeTaskError)
    expect((thrown as Error).message).toBe('the computation "concaveOutline" failed: the stand-in task failed on purpose')
    routeComputeTask('concaveOutline', { filename: FIXTURE, name: 'exit' })
    const died = await compute.concaveOutline(uv, spacing).catch((e: unknown) => e)
    expect(died).toBeInstanceOf(ComputeTaskError)
    routeComputeTask('concaveOutline', null)
    expect(await compute.concaveOutline(uv, spacing)).toEqual(concaveOutline(uv, spacing))
  })
})

/** A scene in memory: a wall with a 0.9 x 2.0 m door (scan "wall") and a 0.6 x 0.4 x 1.2 m box (scan "box"). */
function sceneContext(): { ctx: CheckContext; section: CheckInput; clearance: CheckInput } {
  const wall = Float64Array.from(wallWithOpening({ width: 0.9, height: 2.0, spacing: 0.02, noise: 0.001, thickness: 0.2 }).xyz)
  const box = Float64Array.from(boxSolid(0.6, 0.4, 1.2, 0.02, 0.001).transformed([1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, -2, 0, 1]).xyz)
  const scans = new Map([['wall', wall], ['box', box]])
  const identity = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]
  const section: CheckInput = {
    kind: 'section',
    anchors: [{ instanceId: WALL_ID, x: -0.45, y: 0, z: 1 }, { instanceId: WALL_ID, x: 0.45, y: 0, z: 1 }],
    params: { plane: 'two-points', thickness: 0.1, opening: true },
    revision: 1,
  }
  const clearance: CheckInput = { kind: 'clearance', anchors: [], params: { objectInstanceId: BOX_ID, sectionMarkerId: SECTION_ID }, revision: 1 }
  const ctx: CheckContext = {
    placements: new Map([[WALL_ID, { matrix: identity, scanId: 'wall', registrationU: 0 }], [BOX_ID, { matrix: identity, scanId: 'box', registrationU: 0 }]]),
    scans: new Map([['wall', { name: 'wall', status: 'ready', spacing: 0.02, pointUncertainty: 0.001 }], ['box', { name: 'box', status: 'ready', spacing: 0.02, pointUncertainty: 0.001 }]]),
    settings: { anchorTolerance: null, requiredMargin: 0.05 },
    // The clearance names its box by placement: a one-member object with no trims (identity placement).
    objectPoints: async (target) => {
      if (typeof target === 'string' || target.instanceId !== BOX_ID) throw new Error('this test names the box placement only')
      return { name: 'box', points: Float64Array.from(box), around: new Float64Array(0), members: [{ instanceId: BOX_ID, scanName: 'box', registrationU: 0, stored: box.length / 3, kept: box.length / 3 }], pointUncertainty: 0.001, spacing: 0.02, strayDropped: 0 }
    },
    points: {
      async snap(scanId, x, y, z) {
        const p = scans.get(scanId)!
        let best = 0, bestD = Infinity
        for (let i = 0; i < p.length; i += 3) {
          const d = (p[i]! - x) ** 2 + (p[i + 1]! - y) ** 2 + (p[i + 2]! - z) ** 2
          if (d < bestD) (bestD = d), (best = i)
        }
        return { x: p[best]!, y: p[best + 1]!, z: p[best + 2]!, distance: Math.sqrt(bestD), uncertainty: null }
      },
      async slab(scanId, o, n, half) {
        const p = scans.get(scanId)!, out: number[] = []
        for (let i = 0; i < p.length; i += 3) if (Math.abs((p[i]! - o[0]!) * n[0]! + (p[i + 1]! - o[1]!) * n[1]! + (p[i + 2]! - o[2]!) * n[2]!) <= half) out.push(p[i]!, p[i + 1]!, p[i + 2]!)
        return Float64Array.from(out)
      },
      async allPoints(scanId) {
        return Float64Array.from(scans.get(scanId)!)
      },
    },
    marker: async (id) => (id === SECTION_ID ? section : undefined),
  }
  return { ctx, section, clearance }
}

describe('marker checks on the pool', () => {
  it('checks a clearance, and a computation that throws fails that check with its message, not the next', async () => {
    const { ctx, clearance } = sceneContext()
    routeComputeTask('fittedOutline', { filename: FIXTURE, name: 'fail' })
    const failed = await checkMarker(clearance, ctx)
    expect(failed.state).toBe('invalid-geometry')
    expect(failed.reason).toBe('The check could not be computed: the computation "fittedOutline" failed: the stand-in task failed on purpose.')
    expect(failed.value).toBeNull()
    routeComputeTask('fittedOutline', null)
    const checked = await checkMarker(clearance, ctx)
    expect(checked.state).toBe('checked')
    // 0.9 m door, 0.6 m box: 0.150 m a side, within the check's own expanded uncertainty and a grid cell.
    expect(Math.abs(checked.value! - 0.15)).toBeLessThan(checked.expandedUncertainty! + 0.01)
  })

  it('latest wins: a check whose marker changed while its computation ran stops, superseded, and stores nothing', async () => {
    const { ctx, clearance } = sceneContext()
    let newer = false
    ctx.cancelled = () => newer
    routeComputeTask('fittedOutline', { filename: FIXTURE, name: 'gatedOutline' })
    const channel = new BroadcastChannel('compute-test-gate')
    channel.onmessage = (e: MessageEvent) => {
      if (e.data !== 'started') return
      newer = true // a newer revision arrives while the worker holds the outline
      channel.postMessage('release')
    }
    try {
      const check = await checkMarker(clearance, ctx)
      expect(newer).toBe(true)
      expect(check.state).toBe('pending')
      expect(check.reason).toBe('superseded by a newer change')
      expect(check.result).toBeNull()
    } finally {
      channel.close()
    }
  })
})
