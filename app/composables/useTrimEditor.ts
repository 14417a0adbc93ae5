import { computed, onBeforeUnmount, onMounted, ref, shallowRef, watch, type ShallowRef } from 'vue'
import type { Trim, TrimMode } from '@shared/schemas'
import { ApiError } from '@/api/http'
import { firstBox, trimBody, type TrimDraft, type TrimProblem, type TrimTarget } from '@/components/objects/trimDraft'
import type { PointViewer } from '@/viewer/PointViewer'
import type { BoxHandleKind } from '@/viewer/trimBoxHandles'
import { TRIM_COLOURS } from '@/viewer/trimOutlines'
import type { PickResult, Vec3 } from '@/viewer/types'

/** A click this close (CSS pixels) to the outline's first corner closes it. */
export const CLOSE_OUTLINE_PX = 10

/** How far above a picked floor point a "cut below" goes, metres: clear of a scanner's floor noise (a few mm). */
export const FLOOR_MARGIN = 0.01

export type TrimKind = TrimDraft['shape']
/** Which way an outline is drawn: along the current view (snapped to an axis), or from above or a side. */
export type OutlineView = 'view' | 'above' | 'front' | 'side'
const LOOK: Record<Exclude<OutlineView, 'view'>, Vec3> = { above: [0, 0, -1], front: [0, 1, 0], side: [-1, 0, 0] }

interface Options {
  viewer: ShallowRef<PointViewer | null>
  /** The last picked point (a new box starts there, else at the view's centre). */
  picked: () => PickResult | null
  save(target: TrimTarget, body: unknown): Promise<Trim>
}

/**
 * A trim being drawn in the view: a box with handles (and typed numbers), a level "cut below" (typed, or from a
 * picked floor point), or an outline clicked on a head-on view and swept along it. Holds the draft, drives the
 * viewer (handles, head-on view, click mode, the outline's corners) and saves through the API; problems name
 * the field (checked with the API's schema before sending; the server's answer shown as it comes).
 */
export function useTrimEditor(options: Options) {
  const { viewer } = options
  const target = ref<TrimTarget | null>(null)
  const targetName = ref('')
  const mode = ref<TrimMode>('keep')
  const draft = shallowRef<TrimDraft | null>(null)
  const handles = ref<BoxHandleKind>('move')
  const outlineView = ref<OutlineView>('view')
  /** The next click on the points sets the cut's height. */
  const pickingFloor = ref(false)
  const problem = ref<TrimProblem | null>(null)
  const saving = ref(false)
  const active = computed(() => draft.value !== null)

  /** What a click in the view does while drawing: corners of an open outline, a floor point, or nothing. */
  const clickMode = computed<'pick' | 'screen' | 'none' | null>(() => {
    const d = draft.value
    if (!d) return null
    if (d.shape === 'prism' && !d.closed) return 'screen'
    if (pickingFloor.value) return 'pick'
    return 'none'
  })

  function show(): void {
    const v = viewer.value
    const d = draft.value
    if (!v) return
    v.editTrimBox(d?.shape === 'box' ? { centre: d.centre, size: d.size, rotation: d.rotation } : null, handles.value, TRIM_COLOURS[mode.value])
    v.setOutlineDraft(d?.shape === 'prism' && !d.closed ? outlineScene(d) : [])
  }

  function outlineScene(d: Extract<TrimDraft, { shape: 'prism' }>): Vec3[] {
    const { origin, u, v } = d.frame
    return d.corners.map(([a, b]) => [origin[0] + a * u[0] + b * v[0], origin[1] + a * u[1] + b * v[1], origin[2] + a * u[2] + b * v[2]])
  }

  watch([draft, handles, mode, viewer], show)

  function lookHeadOn(): void {
    const v = viewer.value
    if (!v) return
    const frame = v.viewAxisHeadOn(outlineView.value === 'view' ? undefined : LOOK[outlineView.value])
    if (!frame) {
      problem.value = { field: 'outline', message: 'the points are not loaded yet' }
      return
    }
    draft.value = { shape: 'prism', frame, corners: [], closed: false }
  }

  function start(next: TrimTarget, name: string, kind: TrimKind, trimMode: TrimMode): void {
    const v = viewer.value
    if (!v) return
    cancel()
    target.value = next
    targetName.value = name
    mode.value = next.objectId === null ? 'cut' : trimMode
    problem.value = null
    if (kind === 'box') draft.value = firstBox(options.picked()?.point ?? v.viewCentre(), v.radius)
    else if (kind === 'below') {
      const at = options.picked()?.point ?? v.viewCentre()
      // A floor cut FLOOR_MARGIN above the picked point (or the view's centre), clear of the floor's noise.
      draft.value = { shape: 'below', height: Math.round((at[2] + FLOOR_MARGIN) * 1000) / 1000, at }
    } else lookHeadOn()
  }

  function cancel(): void {
    const v = viewer.value
    const wasOutline = draft.value?.shape === 'prism'
    draft.value = null
    target.value = null
    pickingFloor.value = false
    problem.value = null
    if (v && wasOutline && v.inProfileView) v.leaveProfileView()
  }

  watch(viewer, (v) => {
    v?.on('trim-box-change', ({ shape }) => {
      if (draft.value?.shape !== 'box') return
      draft.value = { shape: 'box', centre: shape.centre, size: shape.size, rotation: shape.rotation }
      problem.value = null
    })
    v?.on('screen-click', ({ x, y }) => addCorner(x, y))
  })

  function addCorner(x: number, y: number): void {
    const d = draft.value
    const v = viewer.value
    if (!v || d?.shape !== 'prism' || d.closed) return
    const first = d.corners.length >= 3 ? outlineScene(d)[0]! : null
    const firstPx = first ? v.project(...first) : null
    if (firstPx && Math.hypot(firstPx.x - x, firstPx.y - y) <= CLOSE_OUTLINE_PX) {
      closeOutline()
      return
    }
    const p = v.screenToPlane(x, y, d.frame.origin)
    if (!p) return
    const { origin, u, v: up } = d.frame
    const rel = [p[0] - origin[0], p[1] - origin[1], p[2] - origin[2]]
    const a = rel[0]! * u[0] + rel[1]! * u[1] + rel[2]! * u[2]
    const b = rel[0]! * up[0] + rel[1]! * up[1] + rel[2]! * up[2]
    draft.value = { ...d, corners: [...d.corners, [a, b]] }
    problem.value = null
  }

  function closeOutline(): void {
    const d = draft.value
    if (d?.shape !== 'prism') return
    if (d.corners.length < 3) {
      problem.value = { field: 'outline', message: 'must have at least 3 corners' }
      return
    }
    draft.value = { ...d, closed: true }
  }

  // Esc takes back an outline's last corner, or drops the trim being drawn (not while typing in a field).
  function onKey(event: KeyboardEvent): void {
    if (event.key !== 'Escape' || !draft.value) return
    const el = event.target as HTMLElement | null
    if (el && (el.tagName === 'INPUT' || el.tagName === 'SELECT' || el.tagName === 'TEXTAREA')) return
    const d = draft.value
    if (d.shape === 'prism' && !d.closed && d.corners.length > 0) draft.value = { ...d, corners: d.corners.slice(0, -1) }
    else cancel()
  }
  onMounted(() => window.addEventListener('keydown', onKey))
  onBeforeUnmount(() => window.removeEventListener('keydown', onKey))

  async function save(): Promise<Trim | null> {
    const t = target.value
    const d = draft.value
    if (!t || !d) return null
    const checked = trimBody(t, mode.value, d)
    if ('problem' in checked) {
      problem.value = checked.problem
      return null
    }
    saving.value = true
    try {
      const trim = await options.save(t, checked.body)
      cancel()
      return trim
    } catch (error) {
      // The API's own words; its field (body.shape.size.0) as the panel names it.
      const field = error instanceof ApiError && error.field ? error.field.replace(/^body\./, '') : 'trim'
      problem.value = { field, message: error instanceof Error ? error.message : String(error) }
      return null
    } finally {
      saving.value = false
    }
  }

  return {
    target,
    targetName,
    mode,
    draft,
    handles,
    outlineView,
    pickingFloor,
    problem,
    saving,
    active,
    clickMode,
    start,
    cancel,
    save,
    closeOutline,
    /** Draws the outline again from the start, along the chosen view. */
    restartOutline: lookHeadOn,
    /** Typed numbers (the panel has parsed and named them). */
    setDraft(next: TrimDraft): void {
      draft.value = next
      problem.value = null
    },
    setProblem(p: TrimProblem | null): void {
      problem.value = p
    },
    /** A click on the points while the floor is being picked: the cut goes a little above it. */
    takePick(pick: PickResult): void {
      const d = draft.value
      if (!pickingFloor.value || d?.shape !== 'below') return
      pickingFloor.value = false
      draft.value = { shape: 'below', height: Math.round((pick.point[2] + FLOOR_MARGIN) * 1000) / 1000, at: pick.point }
    },
  }
}

export type TrimEditor = ReturnType<typeof useTrimEditor>

/** What browser tests read while a scene view is mounted: the trim being drawn and what the view hides. */
export interface SpanmarkObjectsHook {
  draft(): TrimDraft | null
  /** Drawn points a scene cut takes away, by placement id. */
  cutPoints(): Record<string, number>
  /** Trims drawn as outlines. */
  outlines(): number
  /** The handle of the box being drawn under the pointer ('X', 'Y', 'Z', 'XY', ...), or null. */
  onHandle(): string | null
}

type HookWindow = { __spanmark?: Record<string, unknown> }

/** Installs `window.__spanmark.objects` while the scene page is mounted. */
export function installObjectsTestHook(viewer: ShallowRef<PointViewer | null>, editor: TrimEditor): void {
  const w = window as unknown as HookWindow
  const hook: SpanmarkObjectsHook = {
    draft: () => editor.draft.value,
    cutPoints: () => viewer.value?.cutPoints() ?? {},
    outlines: () => viewer.value?.trimOutlineCount ?? 0,
    onHandle: () => viewer.value?.trimHandleHovered ?? null,
  }
  onMounted(() => {
    w.__spanmark = { ...w.__spanmark, objects: hook }
  })
  onBeforeUnmount(() => {
    if (!w.__spanmark) return
    delete w.__spanmark.objects
    if (Object.keys(w.__spanmark).length === 0) delete w.__spanmark
  })
}
