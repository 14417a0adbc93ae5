import { onBeforeUnmount, onMounted, reactive, ref, shallowRef, watch, type Ref } from 'vue'
import { apiPointSource } from '@/api/points'
import { MAX_DRAW_LIMIT, MIN_DRAW_LIMIT, PointViewer } from '@/viewer/PointViewer'
import type { InstanceSpec, InstanceStatus, PickResult, ViewerStats } from '@/viewer/types'
import type { ViewerSettings } from './useViewerSettings'

/** What browser tests read while a scene view is mounted. */
export interface SpanmarkViewerHook {
  stats(): ViewerStats
  project(x: number, y: number, z: number): { x: number; y: number }
  lastPick(): { x: number; y: number; z: number } | null
  setDrawLimit(points: number): void
}

declare global {
  interface Window {
    __spanmark?: { viewer?: SpanmarkViewerHook }
  }
}

const STATS_EVERY_MS = 250

/**
 * Owns the scene's PointViewer: made on mount inside `container`, disposed on unmount (practice 9: a plain class
 * in a shallowRef). Feeds it the placements and the settings, and turns its events into refs for the page.
 */
export function useSceneViewer(container: Ref<HTMLElement | null>, instances: () => InstanceSpec[], settings: ViewerSettings) {
  const viewer = shallowRef<PointViewer | null>(null)
  const stats = ref<ViewerStats | null>(null)
  const hover = shallowRef<PickResult | null>(null)
  const picked = shallowRef<PickResult | null>(null)
  const walking = ref(false)
  const profile = ref(false)
  const statuses = reactive(new Map<string, { status: InstanceStatus; message?: string }>())
  const pickListeners = new Set<(pick: PickResult) => void>()
  let timer: ReturnType<typeof setInterval> | undefined

  onMounted(() => {
    const el = container.value
    if (!el) return
    const v = new PointViewer(el, {
      source: apiPointSource,
      drawLimit: settings.drawLimit,
      pointSize: settings.pointSize,
      colorMode: settings.colorMode,
    })
    v.canvas.dataset.testid = 'scene-viewport'
    v.canvas.setAttribute('aria-label', 'Scene viewport: drag to turn, right-drag to slide, wheel to zoom, double-click to turn about a point')
    v.on('hover', (p) => (hover.value = p))
    v.on('pick', (p) => {
      picked.value = p
      for (const listener of pickListeners) listener(p)
    })
    v.on('walk-change', (on) => (walking.value = on))
    v.on('profile-change', (on) => (profile.value = on))
    v.on('instance-status', (s) => statuses.set(s.instanceId, { status: s.status, message: s.message }))
    viewer.value = v
    v.setInstances(instances())
    timer = setInterval(() => (stats.value = v.stats()), STATS_EVERY_MS)

    window.__spanmark = {
      ...window.__spanmark,
      viewer: {
        stats: () => v.stats(),
        project: (x, y, z) => v.project(x, y, z) ?? { x: Number.NaN, y: Number.NaN },
        lastPick: () => {
          const p = v.lastPick()
          return p ? { x: p.point[0], y: p.point[1], z: p.point[2] } : null
        },
        setDrawLimit: (points) => {
          settings.drawLimit = Math.round(Math.min(MAX_DRAW_LIMIT, Math.max(MIN_DRAW_LIMIT, points)))
          v.setDrawLimit(points)
        },
      },
    }
  })

  onBeforeUnmount(() => {
    clearInterval(timer)
    if (window.__spanmark) {
      delete window.__spanmark.viewer
      if (Object.keys(window.__spanmark).length === 0) delete window.__spanmark
    }
    viewer.value?.dispose()
    viewer.value = null
  })

  watch(instances, (specs) => viewer.value?.setInstances(specs), { deep: true })
  watch(
    () => settings.drawLimit,
    (n) => viewer.value?.setDrawLimit(n),
  )
  watch(
    () => settings.pointSize,
    (n) => viewer.value?.setPointSize(n),
  )
  watch(
    () => settings.colorMode,
    (m) => viewer.value?.setColorMode(m),
  )

  return {
    viewer,
    stats,
    hover,
    picked,
    walking,
    profile,
    statuses,
    /** Listens to every click's pick (the section tool takes its two points this way). */
    onPick(listener: (pick: PickResult) => void): () => void {
      pickListeners.add(listener)
      return () => pickListeners.delete(listener)
    },
  }
}
