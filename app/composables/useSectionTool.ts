import { ref, watch, type ShallowRef } from 'vue'
import type { PointViewer } from '@/viewer/PointViewer'
import { normaliseSlab, verticalSlabThrough } from '@/viewer/sectionSlab'
import type { PickResult, SectionSlab, Vec3 } from '@/viewer/types'

/** Default slab thickness, metres: thin enough for a clean profile, thick enough to hold points at scan spacing. */
export const DEFAULT_SECTION_THICKNESS = 0.05

/**
 * The section tool: two clicks on the points set a vertical section through them; or a point, a normal and a
 * thickness typed in. The slab clips every placement; "head-on" looks along its normal.
 */
export function useSectionTool(viewer: ShallowRef<PointViewer | null>) {
  const active = ref(false)
  const first = ref<Vec3 | null>(null)
  const slab = ref<SectionSlab | null>(null)
  const thickness = ref(DEFAULT_SECTION_THICKNESS)
  const message = ref<string | null>(null)

  function apply(next: SectionSlab | null): void {
    slab.value = next
    viewer.value?.setSection(next)
  }

  function restart(): void {
    first.value = null
    message.value = null
    viewer.value?.setMark('section', null)
  }

  watch(active, (on) => {
    if (!on) restart()
  })

  return {
    active,
    first,
    slab,
    thickness,
    message,
    /** Feeds a click's point: the first marks, the second sets the slab. */
    takePick(pick: PickResult): void {
      if (!active.value) return
      if (!first.value) {
        first.value = pick.point
        message.value = null
        viewer.value?.setMark('section', pick.point)
        return
      }
      const next = verticalSlabThrough(first.value, pick.point, thickness.value)
      restart()
      if (!next) {
        message.value = 'The two points are at the same place seen from above. Click two points apart.'
        return
      }
      apply(next)
    },
    /** A slab typed in; returns the problem, or null when applied. */
    applyNumbers(input: SectionSlab): string | null {
      const next = normaliseSlab(input)
      if (typeof next === 'string') return next
      thickness.value = next.thickness
      restart()
      apply(next)
      return null
    },
    setThickness(metres: number): void {
      thickness.value = metres
      if (slab.value) apply({ ...slab.value, thickness: metres })
    },
    clear(): void {
      restart()
      apply(null)
    },
    restart,
    lookHeadOn(): void {
      viewer.value?.viewSectionHeadOn()
    },
    leaveHeadOn(): void {
      viewer.value?.leaveProfileView()
    },
  }
}
