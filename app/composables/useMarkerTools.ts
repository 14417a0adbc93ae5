import { computed, onBeforeUnmount, onMounted, reactive, ref, toValue, watch, type MaybeRefOrGetter, type Ref, type ShallowRef } from 'vue'
import { checkOutcome, kindWord, MARKER_KINDS, type Instance, type Marker, type MarkerCreateBody, type MarkerKind, type Scan } from '@shared/schemas'
import { anchorBudget } from '@shared/measure/uncertainty'
import type { LengthUnit } from '@shared/format/units'
import { ApiError } from '@/api/http'
import { markerView, previewView } from '@/components/viewer/markerViews'
import { addPick, type Picked } from '@/components/viewer/markerPlacing'
import type { ViewerTool } from '@/components/viewer/viewerTools'
import { kindOfTool, kindUi, type PlacingContext } from '@/kinds'
import type { MarkerView } from '@/viewer/markerLayer'
import type { PointViewer } from '@/viewer/PointViewer'
import type { PickResult, Vec3 } from '@/viewer/types'

export interface MarkerToolsOptions {
  tool: Ref<ViewerTool | null>
  viewer: ShallowRef<PointViewer | null>
  /** Where a click would land now (the viewer's throttled hover), for the live preview. */
  hover: ShallowRef<PickResult | null>
  unit: Readonly<Ref<LengthUnit>>
  /** A placement's per-coordinate standard uncertainty of one picked point, metres (for the preview only). */
  uncertaintyOf: (instanceId: string) => number
  /** Saves a marker; the server answers after its check. */
  create: (body: MarkerCreateBody) => Promise<Marker>
  onCreated: (marker: Marker) => void
}

function problemText(error: unknown): string {
  if (error instanceof ApiError) return error.message
  return error instanceof Error ? error.message : String(error)
}

/**
 * Placing markers, whatever their kind (app/kinds: each says how many clicks it takes, what to click next,
 * its preview, its options and its panel): the clicks on the points, a live preview of the value
 * (shared/measure with each scan's uncertainty; the server's check is the value that counts), saving through
 * `create`, and Esc to start over.
 */
export function useMarkerTools(options: MarkerToolsOptions) {
  const { tool, viewer, hover, unit } = options
  const picks = ref<Picked[]>([])
  const saving = ref(false)
  const error = ref<string | null>(null)
  /** Each kind's tool options (a section's plane, thickness and opening), kept while the page is open. */
  const kindOptions = reactive(Object.fromEntries(MARKER_KINDS.map((k) => [k, kindUi(k).options?.() ?? {}]))) as Record<MarkerKind, Record<string, unknown>>

  const active = computed(() => kindOfTool(tool.value) ?? null)
  const markerTool = computed<string | null>(() => active.value?.tool.id ?? null)
  const activeOptions = computed(() => (active.value ? kindOptions[active.value.kind] : {}))
  const needed = computed(() => (active.value ? active.value.clicks(activeOptions.value) : 0))
  const hint = computed(() => {
    const k = active.value
    if (!k) return ''
    if (saving.value) return `Saving the ${kindWord(k.kind)}; the server checks it against the stored points…`
    return k.hint(picks.value.length, activeOptions.value)
  })
  const ready = computed(() => !!active.value && needed.value > 0 && picks.value.length === needed.value)
  const problem = computed(() => active.value?.problem?.(picks.value, activeOptions.value) ?? null)

  /** The picks so far, and the cursor while more are needed. */
  const previewPoints = computed<{ points: Vec3[]; u: number[] }>(() => {
    const list = picks.value.map((p) => ({ point: p.point, instanceId: p.instanceId }))
    const h = hover.value
    if (h && list.length > 0 && list.length < needed.value && !saving.value) list.push({ point: h.point, instanceId: h.instanceId })
    return { points: list.map((p) => p.point), u: list.map((p) => options.uncertaintyOf(p.instanceId)) }
  })
  const preview = computed(() => active.value?.preview?.(previewPoints.value.points, previewPoints.value.u, unit.value) ?? null)

  watch(
    [active, previewPoints, preview, viewer],
    ([k, { points }, text, v]) => v?.setMarkerPreview(k && k.clicks(kindOptions[k.kind]) > 0 ? previewView(k.kind, points, text) : null),
    { immediate: true },
  )

  /** The viewer's pick mark goes too: once a marker draws its own dots, a lone ochre disc reads as one more point. */
  function cancel(): void {
    if (picks.value.length) viewer.value?.clearPick()
    picks.value = []
    error.value = null
  }

  watch(markerTool, cancel)
  // Some options change what the clicks mean (a section's plane): the clicks start over.
  watch(
    () => (active.value?.restartOn ?? []).map((key) => activeOptions.value[key]),
    (now, before) => {
      if (now.some((v, i) => v !== before?.[i])) picks.value = []
    },
  )

  async function save(body: MarkerCreateBody): Promise<Marker | null> {
    saving.value = true
    error.value = null
    try {
      const marker = await options.create(body)
      picks.value = []
      viewer.value?.clearPick()
      options.onCreated(marker)
      return marker
    } catch (e) {
      error.value = problemText(e)
      return null
    } finally {
      saving.value = false
    }
  }

  function takePick(pick: PickResult): void {
    const k = active.value
    if (!k || needed.value === 0 || saving.value) return
    error.value = null
    picks.value = addPick(picks.value, { instanceId: pick.instanceId, point: pick.point }, needed.value)
    if (picks.value.length < needed.value) return
    // Kinds made by clicks alone save now; the others wait for their panel (a section's "Create section").
    if (k.bodyOf) void save(k.bodyOf(picks.value, activeOptions.value))
  }

  function onKey(event: KeyboardEvent): void {
    if (event.key !== 'Escape' || !markerTool.value) return
    const el = event.target as HTMLElement | null
    if (el && (el.tagName === 'INPUT' || el.tagName === 'SELECT' || el.tagName === 'TEXTAREA')) return
    if (picks.value.length > 0 || error.value) cancel()
  }
  onMounted(() => window.addEventListener('keydown', onKey))
  onBeforeUnmount(() => {
    window.removeEventListener('keydown', onKey)
    viewer.value?.setMarkerPreview(null)
  })

  /** What the active kind's panel is handed (app/kinds/types.ts, PlacingContext). */
  const placing = computed<PlacingContext['tools']>(() => ({
    hint: hint.value,
    count: picks.value.length,
    needed: needed.value,
    ready: ready.value,
    problem: problem.value,
    preview: preview.value,
    saving: saving.value,
    error: error.value,
    picks: picks.value,
    options: activeOptions.value,
    save,
    cancel,
  }))

  return { active, markerTool, picks, needed, hint, preview, saving, error, ready, problem, placing, takePick, cancel, save }
}

/**
 * The scene's markers in the viewport: drawn in the reader's unit, the selected one highlighted, and a click
 * on a label selects its marker.
 */
export function useMarkerToolDrawing(
  viewer: ShallowRef<PointViewer | null>,
  markers: Ref<Marker[]>,
  unit: Readonly<Ref<LengthUnit>>,
  selectedId: Ref<string | null>,
  /** Other shapes drawn with the markers (the align tool's tie pairs); their ids start with '__'. */
  extra: Readonly<Ref<MarkerView[]>> = ref([]),
) {
  watch(
    [viewer, markers, unit, extra],
    ([v, list, u, more]) => v?.setMarkers([...list.map((m) => markerView(m, u)), ...more]),
    { immediate: true },
  )
  watch([viewer, selectedId], ([v, id]) => v?.setSelectedMarker(id), { immediate: true })
  watch(
    viewer,
    (v, _old, onCleanup) => {
      if (!v) return
      onCleanup(v.on('marker-select', (id) => !id.startsWith('__') && (selectedId.value = id)))
    },
    { immediate: true },
  )
}

/** What browser tests read and do, beside `window.__spanmark.viewer`. */
export interface SpanmarkMarkersHook {
  count(): number
  list(): { id: string; kind: string; label: string; state: string; value: number | null; expandedUncertainty: number | null; outcome: string | null }[]
  selected(): string | null
  /** When this page first had the marker (epoch ms, the moment its data arrived, before any drawing), or null. */
  seenAt(id: string): number | null
  /** Clicks where a scene-frame point shows (the pick goes to the active tool, as a click would). */
  pick(x: number, y: number, z: number): Promise<{ x: number; y: number; z: number; instanceId: string } | null>
}

type HookWindow = { __spanmark?: Record<string, unknown> }

/** Installs `window.__spanmark.markers` while the scene page is mounted. */
export function useMarkerToolTestHook(viewer: ShallowRef<PointViewer | null>, markers: Ref<Marker[]>, selectedId: Ref<string | null>) {
  const w = window as unknown as HookWindow
  // Taken synchronously as the list changes: a browser test's own polling delay stays out of the figure.
  const firstSeen = new Map<string, number>()
  watch(
    markers,
    (list) => {
      for (const m of list) if (!firstSeen.has(m.id)) firstSeen.set(m.id, Date.now())
    },
    { immediate: true, flush: 'sync' },
  )
  const hook: SpanmarkMarkersHook = {
    count: () => markers.value.length,
    list: () =>
      markers.value.map((m) => ({
        id: m.id,
        kind: m.kind,
        label: m.label,
        state: m.check.state,
        value: m.check.value,
        expandedUncertainty: m.check.expandedUncertainty,
        outcome: checkOutcome(m.check),
      })),
    selected: () => selectedId.value,
    seenAt: (id) => firstSeen.get(id) ?? null,
    pick: async (x, y, z) => {
      const p = await viewer.value?.pickScenePoint([x, y, z])
      return p ? { x: p.point[0], y: p.point[1], z: p.point[2], instanceId: p.instanceId } : null
    },
  }
  onMounted(() => {
    w.__spanmark = { ...w.__spanmark, markers: hook }
  })
  onBeforeUnmount(() => {
    if (!w.__spanmark) return
    delete w.__spanmark.markers
    if (Object.keys(w.__spanmark).length === 0) delete w.__spanmark
  })
}

const DRAWER_KEY = 'spanmark.scene.markersDrawer'
/** CSS pixels: the placements rail (272) and the drawer (440) leave about 700 for the viewport. */
export const DRAWER_OPEN_MIN_WIDTH = 1400

/**
 * Whether the markers drawer is open: as the reader last left it; on a first visit, open only where the window
 * leaves the viewport room beside the rail and the drawer (below that it opens when a marker is made).
 */
export function useMarkerToolDrawer(): Ref<boolean> {
  let start = window.innerWidth >= DRAWER_OPEN_MIN_WIDTH
  try {
    const saved = localStorage.getItem(DRAWER_KEY)
    if (saved === 'open' || saved === 'folded') start = saved === 'open'
  } catch {
    // Storage refused: the window's width decides.
  }
  const open = ref(start)
  watch(open, (on) => {
    try {
      localStorage.setItem(DRAWER_KEY, on ? 'open' : 'folded')
    } catch {
      // Private windows may refuse storage; the drawer still opens and folds for this visit.
    }
  })
  return open
}

/** What the marker tools need to know of the scans behind the placements. */
export function useMarkerToolScans(
  placements: MaybeRefOrGetter<Instance[]>,
  scans: MaybeRefOrGetter<Scan[] | undefined>,
  selectedPlacementId: MaybeRefOrGetter<string | null>,
) {
  const scanOf = (instanceId: string) => {
    const scanId = toValue(placements).find((p) => p.id === instanceId)?.scanId
    return toValue(scans)?.find((s) => s.id === scanId)
  }
  return {
    /** Per-coordinate standard uncertainty of a point picked on a placement, metres (the preview's; the server's check counts). */
    uncertaintyOf(instanceId: string): number {
      const scan = scanOf(instanceId)
      const budget = anchorBudget({ point: scan?.pointUncertainty ?? 0, spacing: scan?.spacing ?? 0 })
      return budget.ok ? budget.total : 0
    },
    /** The clearance tool's first guess at the object: the placement selected in the rail, else the smallest scan. */
    likelyObjectId: computed(() => {
      const selected = toValue(selectedPlacementId)
      if (selected) return selected
      const size = (p: Instance) => {
        const b = scanOf(p.id)?.bounds
        return b ? (b.max[0] - b.min[0]) * (b.max[1] - b.min[1]) * (b.max[2] - b.min[2]) : Infinity
      }
      return [...toValue(placements)].sort((a, b) => size(a) - size(b))[0]?.id ?? null
    }),
  }
}
