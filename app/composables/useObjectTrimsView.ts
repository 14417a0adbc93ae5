import { computed, watch, type ShallowRef } from 'vue'
import type { Instance, SceneObject, Trim } from '@shared/schemas'
import type { PointViewer } from '@/viewer/PointViewer'
import type { TrimOutline } from '@/viewer/trimOutlines'
import { toScanFrame, type PlacementTrims } from '@/viewer/trimStates'

interface Options {
  viewer: ShallowRef<PointViewer | null>
  /** The scene's placements as the server has them (trims come from the API with these matrices applied). */
  instances: () => readonly Instance[]
  objects: () => readonly SceneObject[]
  /** Scene cuts by placement id. */
  cuts: () => ReadonlyMap<string, readonly Trim[]> | undefined
  /** The object whose panel is open: its trims drawn, its kept points lit. */
  openObjectId: () => string | null
  /** Whether the objects panel is open (scene cuts' outlines are drawn while it is). */
  panelOpen: () => boolean
  cutStyle: () => 'hide' | 'dim'
  /** A trim being drawn that has no handles of its own (a level cut, a closed outline). */
  draft: () => TrimOutline | null
}

/**
 * What the viewer shows of trims: every placement's scene cuts hide (or dim) their points; the open object's
 * members light the points its trims keep; the trims themselves drawn as outlines while the panel is open.
 * The states are computed on the points in each scan's own frame (the trims moved there by the inverse of the
 * placement's matrix, shared/geometry/trimFrame.ts), so a placement moved later keeps them right.
 */
export function useObjectTrimsView(options: Options) {
  const perPlacement = computed(() => {
    const open = options.objects().find((o) => o.id === options.openObjectId()) ?? null
    const cuts = options.cuts()
    const out = new Map<string, PlacementTrims>()
    for (const inst of options.instances()) {
      const placementCuts = cuts?.get(inst.id) ?? []
      const member = open?.members.includes(inst.id) ? open.trims.filter((t) => t.instanceId === inst.id) : null
      if (placementCuts.length === 0 && member === null) continue
      out.set(inst.id, { cuts: toScanFrame(placementCuts, inst.matrix), member: member ? toScanFrame(member, inst.matrix) : null })
    }
    return out
  })
  // The trims' identity: the states are computed again only when it changes (not on every list refetch).
  const signature = computed(() => {
    const open = options.objects().find((o) => o.id === options.openObjectId())
    const cuts = [...(options.cuts()?.values() ?? [])].flat()
    return JSON.stringify([open?.id, open?.members, [...(open?.trims ?? []), ...cuts].map((t) => [t.id, t.revision, t.shape, t.mode]), options.instances().map((i) => [i.id, i.matrix])])
  })
  watch(
    [options.viewer, signature],
    ([v]) => v?.setPlacementTrims(perPlacement.value),
    { immediate: true },
  )
  watch([options.viewer, options.cutStyle], ([v, style]) => v?.setCutStyle(style), { immediate: true })

  const outlines = computed<TrimOutline[]>(() => {
    const list: TrimOutline[] = []
    if (options.panelOpen()) {
      const open = options.objects().find((o) => o.id === options.openObjectId())
      for (const t of open?.trims ?? []) list.push({ id: t.id, mode: t.mode, shape: t.shape, instanceId: t.instanceId })
      for (const cuts of options.cuts()?.values() ?? []) for (const t of cuts) list.push({ id: t.id, mode: t.mode, shape: t.shape, instanceId: t.instanceId })
    }
    const draft = options.draft()
    if (draft) list.push(draft)
    return list
  })
  watch([options.viewer, outlines], ([v, list]) => v?.setTrimOutlines(list), { immediate: true })

  return { outlines }
}
