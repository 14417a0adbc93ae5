import { computed, onBeforeUnmount, onMounted, ref, shallowRef, toValue, watch, type MaybeRefOrGetter, type Ref, type ShallowRef } from 'vue'
import { useQuery, useQueryClient } from '@tanstack/vue-query'
import { SPHERE_RADIUS, type Instance, type Registration, type TieTarget } from '@shared/schemas'
import type { LengthUnit } from '@shared/format/units'
import * as api from '@/api/registrations'
import { ApiError } from '@/api/http'
import {
  alignErrorText,
  alignHint,
  fitBody,
  isComplete,
  nextSlot,
  pairsProblem,
  pairsSignature,
  placePick,
  residualsByKey,
  tieViews,
  type TiePairDraft,
  type TieSideName,
  type TieSlot,
} from '@/components/viewer/alignPairs'
import type { ViewerTool } from '@/components/viewer/viewerTools'
import type { MarkerView } from '@/viewer/markerLayer'
import type { PointViewer } from '@/viewer/PointViewer'
import type { PickResult } from '@/viewer/types'
import { queryKeys } from './queryKeys'

export interface AlignToolOptions {
  tool: Ref<ViewerTool | null>
  sceneId: MaybeRefOrGetter<string>
  viewer: ShallowRef<PointViewer | null>
  /** The placements as the server has them. */
  placements: MaybeRefOrGetter<Instance[]>
  /** Shows a placement at a matrix without saving it (null: back to the server's). */
  preview: (instanceId: string, matrix: number[] | null) => void
  unit: Readonly<Ref<LengthUnit>>
}

/** How often a running refinement is asked for its progress, ms. */
const POLL_MS = 400

/**
 * The align tool (key T): choose the placement that moves and the one that stays, click tie pairs (the
 * moving side first, then the held side; each click lands only on that side's placement and is snapped on
 * the server), fit them in closed form, refine by ICP, accept, or undo the accepted registration. After a
 * fit the moving placement is shown where accepting would put it (unsaved) until the reader turns that off.
 */
export function useAlignTool(options: AlignToolOptions) {
  const { tool, viewer, unit } = options
  const client = useQueryClient()
  const active = computed(() => tool.value === 'align')
  const placements = computed(() => toValue(options.placements))
  const movingId = ref<string | null>(null)
  const heldId = ref<string | null>(null)
  const pairs = ref<TiePairDraft[]>([])
  const repick = ref<TieSlot | null>(null)
  const target = ref<TieTarget>('sphere')
  const sphereRadius = ref<number>(SPHERE_RADIUS.default)
  const registration = shallowRef<Registration | null>(null)
  /** Row keys of the pairs the current registration was fitted from, in the order sent. */
  const fittedKeys = ref<number[]>([])
  const fittedSignature = ref<string | null>(null)
  const showAligned = ref(true)
  const busy = ref<'fit' | 'refine' | 'accept' | 'undo' | null>(null)
  const error = ref<string | null>(null)
  const notice = ref<string | null>(null)
  let nextKey = 1
  /**
   * A running refinement, followed through the query library: refetched every POLL_MS while the server says it
   * runs, then left (each follow its own key, so an earlier answer never stands in for the new one).
   */
  const followed = ref<{ id: string; run: number } | null>(null)
  let runs = 0
  const following = useQuery({
    queryKey: computed(() => ['registrations', 'follow', followed.value?.id ?? null, followed.value?.run ?? 0]),
    queryFn: ({ signal }) => api.getRegistration(followed.value!.id, signal),
    enabled: computed(() => followed.value !== null),
    refetchInterval: (query) => (query.state.data?.refine?.status === 'running' ? POLL_MS : false),
    retry: false,
    gcTime: 0,
  })
  watch(following.data, (r) => {
    if (!r || r.id !== followed.value?.id) return
    registration.value = r
    if (r.refine?.status !== 'running') followed.value = null
  })
  watch(following.error, (e) => {
    if (!e || !followed.value) return
    error.value = problemText(e, [])
    followed.value = null
  })

  const report = useQuery({
    queryKey: computed(() => queryKeys.registrations(toValue(options.sceneId))),
    queryFn: ({ signal }) => api.getRegistrationReport(toValue(options.sceneId), signal),
    enabled: active,
    meta: { inlineErrors: true },
  })

  // Defaults: the first placement stays, the second moves (the demo's station A and station B).
  watch(
    placements,
    (list) => {
      const ids = list.map((p) => p.id)
      if (!heldId.value || !ids.includes(heldId.value)) heldId.value = ids[0] ?? null
      if (!movingId.value || !ids.includes(movingId.value) || movingId.value === heldId.value) movingId.value = ids.find((id) => id !== heldId.value) ?? null
    },
    { immediate: true },
  )

  const nameOf = (id: string | null) => placements.value.find((p) => p.id === id)?.scanName ?? 'a placement'
  const names = computed(() => ({ moving: nameOf(movingId.value), held: nameOf(heldId.value) }))
  const serverMatrix = (id: string) => placements.value.find((p) => p.id === id)?.matrix
  const slot = computed(() => nextSlot(pairs.value, repick.value))
  const expectedSide = computed<string | null>(() => (slot.value.side === 'moving' ? movingId.value : heldId.value))
  const signature = computed(() => pairsSignature(pairs.value, target.value, sphereRadius.value))
  const stale = computed(() => registration.value?.state === 'draft' && registration.value.pairs.length > 0 && fittedSignature.value !== signature.value)
  const refining = computed(() => registration.value?.refine?.status === 'running')
  const problem = computed(() => pairsProblem(pairs.value))
  const hint = computed(() => {
    if (!movingId.value || !heldId.value) return 'Place two scans in the scene to align one onto the other.'
    if (busy.value === 'fit') return 'Fitting the tie pairs on the server (each point snapped to the stored points)…'
    if (refining.value) return 'Refining by ICP on the server; the figures below follow it.'
    const r = registration.value
    if (r?.state === 'draft' && r.correction && !stale.value && !repick.value) {
      return `Accept to move “${names.value.moving}” as shown, refine it by ICP, or add tie pair ${slot.value.index + 1} on “${names.value.moving}”.`
    }
    return alignHint(slot.value, names.value, pairs.value)
  })

  /** Where accepting would put the moving placement, while that is shown. */
  const previewMatrix = computed<number[] | null>(() => {
    const r = registration.value
    if (!active.value || !showAligned.value || !r || r.state !== 'draft' || !r.matrixAfter || r.movingInstanceId !== movingId.value) return null
    const current = serverMatrix(r.movingInstanceId)
    // A fit made before the placement moved (someone else moved it) is not shown over the new position.
    return current && current.every((v, i) => Math.abs(v - r.matrixBefore[i]!) <= 1e-9) ? r.matrixAfter : null
  })
  let previewed: string | null = null
  watch(
    [previewMatrix, movingId],
    ([m, id]) => {
      if (previewed && previewed !== id) options.preview(previewed, null)
      // Only a preview of ours is taken back (an unsaved drag of the gizmo is not).
      if (id && (m || previewed === id)) options.preview(id, m)
      previewed = m ? id : null
    },
    { immediate: true },
  )

  const residuals = computed(() => (registration.value?.state === 'draft' && !stale.value ? residualsByKey(registration.value, fittedKeys.value) : new Map<number, number | null>()))
  const views = computed<MarkerView[]>(() => {
    if (!active.value) return []
    const drawn = (id: string) => (id === movingId.value && previewMatrix.value ? previewMatrix.value : serverMatrix(id))
    return tieViews(pairs.value, drawn, residuals.value, unit.value)
  })

  // Clicks land only on the side being picked.
  watch([active, expectedSide, viewer], ([on, id, v]) => v?.setPickOnly(on ? id : null), { immediate: true })

  function resetPairs(): void {
    pairs.value = []
    repick.value = null
    registration.value = null
    fittedKeys.value = []
    fittedSignature.value = null
    error.value = null
    stopPolling()
  }
  watch([movingId, heldId], resetPairs)

  function problemText(e: unknown, keys: number[]): string {
    if (e instanceof ApiError) return alignErrorText(e.message, e.field, keys, pairs.value, names.value)
    return e instanceof Error ? e.message : String(e)
  }

  function takePick(pick: PickResult): void {
    if (!active.value || busy.value || refining.value) return
    if (pick.instanceId !== expectedSide.value) return
    error.value = null
    notice.value = null
    pairs.value = placePick(pairs.value, slot.value, { instanceId: pick.instanceId, scanPoint: pick.scanPoint }, nextKey++)
    repick.value = null
    viewer.value?.clearPick()
  }

  function setMoving(id: string): void {
    if (id === heldId.value) heldId.value = movingId.value
    movingId.value = id
  }
  function setHeld(id: string): void {
    if (id === movingId.value) movingId.value = heldId.value
    heldId.value = id
  }

  function edit(key: number, change: Partial<Pick<TiePairDraft, 'checkPoint' | 'enabled'>>): void {
    pairs.value = pairs.value.map((p) => (p.key === key ? { ...p, ...change } : p))
  }
  function pickAgain(key: number, side: TieSideName): void {
    const index = pairs.value.findIndex((p) => p.key === key)
    if (index >= 0) repick.value = { index, side }
  }
  function remove(key: number): void {
    pairs.value = pairs.value.filter((p) => p.key !== key)
    repick.value = null
  }

  async function fit(): Promise<Registration | null> {
    if (!movingId.value || !heldId.value || problem.value) return null
    const { body, keys } = fitBody(pairs.value, movingId.value, heldId.value, serverMatrix, target.value, sphereRadius.value)
    const sig = signature.value
    busy.value = 'fit'
    error.value = null
    notice.value = null
    try {
      const r = await api.fitRegistration(toValue(options.sceneId), body)
      stopPolling()
      registration.value = r
      fittedKeys.value = keys
      fittedSignature.value = sig
      return r
    } catch (e) {
      error.value = problemText(e, keys)
      return null
    } finally {
      busy.value = null
    }
  }

  function stopPolling(): void {
    followed.value = null
  }

  function follow(id: string): void {
    followed.value = { id, run: ++runs }
  }

  /** ICP from the fit (fitting first when the pairs changed), or from the placement as it is without pairs. */
  async function refine(): Promise<void> {
    if (!movingId.value || !heldId.value) return
    let draft = registration.value?.state === 'draft' && !stale.value && registration.value.movingInstanceId === movingId.value ? registration.value : null
    if (!draft && !problem.value) draft = await fit()
    if (!draft && !problem.value) return
    busy.value = 'refine'
    error.value = null
    notice.value = null
    try {
      const r = await api.refineRegistration(toValue(options.sceneId), { movingInstanceId: movingId.value, heldInstanceId: heldId.value, registrationId: draft?.id })
      registration.value = r
      if (!draft) {
        fittedKeys.value = []
        fittedSignature.value = null
      }
      follow(r.id)
    } catch (e) {
      error.value = problemText(e, fittedKeys.value)
    } finally {
      busy.value = null
    }
  }

  function refreshScene(): void {
    const id = toValue(options.sceneId)
    void client.invalidateQueries({ queryKey: queryKeys.registrations(id) })
    void client.invalidateQueries({ queryKey: queryKeys.scene(id), exact: true })
    void client.invalidateQueries({ queryKey: ['scenes', id, 'sheet'] })
  }

  async function accept(): Promise<void> {
    const r = registration.value
    if (!r || r.state !== 'draft' || !r.correction) return
    busy.value = 'accept'
    error.value = null
    try {
      const done = await api.acceptRegistration(r.id)
      registration.value = done
      pairs.value = []
      repick.value = null
      fittedKeys.value = []
      notice.value = `Accepted: “${done.movingName}” is aligned onto “${done.heldName}”. Its markers are being checked again.`
      refreshScene()
    } catch (e) {
      error.value = problemText(e, fittedKeys.value)
    } finally {
      busy.value = null
    }
  }

  /** The registration that holds for the moving placement now (what Undo takes back). */
  const current = computed(() => report.data.value?.placements.find((p) => p.instanceId === movingId.value) ?? null)

  async function undo(): Promise<void> {
    const id = current.value?.registrationId
    if (!id) return
    busy.value = 'undo'
    error.value = null
    try {
      const back = await api.undoRegistration(id)
      registration.value = null
      notice.value = `Undone: “${back.movingName}” is back where it was before that registration.`
      refreshScene()
    } catch (e) {
      error.value = problemText(e, [])
    } finally {
      busy.value = null
    }
  }

  watch(active, (on) => {
    if (!on) {
      viewer.value?.setPickOnly(null)
      showAligned.value = true
    }
  })

  onBeforeUnmount(() => {
    stopPolling()
    viewer.value?.setPickOnly(null)
  })

  return {
    active,
    movingId,
    heldId,
    names,
    pairs,
    slot,
    repick,
    target,
    sphereRadius,
    registration,
    residuals,
    stale,
    refining,
    problem,
    hint,
    busy,
    error,
    notice,
    showAligned,
    current,
    views,
    completeCount: computed(() => pairs.value.filter(isComplete).length),
    setMoving,
    setHeld,
    edit,
    pickAgain,
    remove,
    takePick,
    fit,
    refine,
    accept,
    undo,
    startOver: resetPairs,
  }
}

export type AlignTool = ReturnType<typeof useAlignTool>

/** What browser tests read (`window.__spanmark.align`). */
export function useAlignToolTestHook(align: AlignTool) {
  const w = window as unknown as { __spanmark?: Record<string, unknown> }
  const hook = {
    state: () => ({
      movingId: align.movingId.value,
      heldId: align.heldId.value,
      pairs: align.pairs.value.length,
      complete: align.completeCount.value,
      slot: align.slot.value,
      busy: align.busy.value,
      error: align.error.value,
      registration: align.registration.value
        ? {
            id: align.registration.value.id,
            state: align.registration.value.state,
            rms: align.registration.value.rms,
            rmsSource: align.registration.value.rmsSource,
            fitRms: align.registration.value.fit?.rms ?? null,
            checkRms: align.registration.value.residuals?.checkRms ?? null,
            refine: align.registration.value.refine?.status ?? null,
            matrixAfter: align.registration.value.matrixAfter,
          }
        : null,
    }),
  }
  onMounted(() => {
    w.__spanmark = { ...w.__spanmark, align: hook }
  })
  onBeforeUnmount(() => {
    if (!w.__spanmark) return
    delete w.__spanmark.align
    if (Object.keys(w.__spanmark).length === 0) delete w.__spanmark
  })
}
