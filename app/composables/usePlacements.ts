import { computed, reactive, ref, toValue, type MaybeRefOrGetter } from 'vue'
import type { Instance, Scene } from '@shared/schemas'
import type { GizmoMode, InstanceSpec } from '@/viewer/types'
import { useUpdateInstance } from './useScenes'

interface Override {
  matrix?: number[]
  visible?: boolean
  color?: string
}

/**
 * The placements as the viewer draws them: the server's, with local changes on top. Editors' changes are saved
 * (the override holds until the server answers, so nothing snaps back meanwhile; a refusal drops it and the
 * placement returns to where the server has it). Mentors and guests may hide, show and recolour for themselves:
 * those overrides stay local and unsaved.
 */
export function usePlacements(scene: MaybeRefOrGetter<Scene | undefined>, canEdit: MaybeRefOrGetter<boolean>) {
  const overrides = reactive(new Map<string, Override>())
  const selectedId = ref<string | null>(null)
  const gizmoMode = ref<GizmoMode>('translate')
  const update = useUpdateInstance()
  const updateInline = useUpdateInstance({ inlineErrors: true })

  const placements = computed<Instance[]>(() => toValue(scene)?.instances ?? [])
  const selected = computed(() => placements.value.find((p) => p.id === selectedId.value) ?? null)

  const specs = computed<InstanceSpec[]>(() =>
    placements.value.map((p) => {
      const o = overrides.get(p.id)
      return { id: p.id, scanId: p.scanId, matrix: o?.matrix ?? p.matrix, visible: o?.visible ?? p.visible, color: o?.color ?? p.color }
    }),
  )

  function effective(id: string): InstanceSpec | undefined {
    return specs.value.find((s) => s.id === id)
  }

  function setOverride(id: string, change: Override): void {
    overrides.set(id, { ...overrides.get(id), ...change })
  }

  function clearOverride(id: string, fields: (keyof Override)[]): void {
    const o = overrides.get(id)
    if (!o) return
    const next = { ...o }
    for (const f of fields) delete next[f]
    if (Object.keys(next).length === 0) overrides.delete(id)
    else overrides.set(id, next)
  }

  async function save(id: string, change: Override, inline: boolean): Promise<void> {
    setOverride(id, change)
    if (!toValue(canEdit)) return
    const fields = Object.keys(change) as (keyof Override)[]
    try {
      await (inline ? updateInline : update).mutateAsync({ instanceId: id, body: change })
    } finally {
      // On success the cache holds the saved values; on failure the server's values come back.
      clearOverride(id, fields)
    }
  }

  return {
    placements,
    specs,
    selectedId,
    selected,
    gizmoMode,
    effective,
    select(id: string | null): void {
      selectedId.value = id
    },
    setVisible(id: string, visible: boolean): void {
      void save(id, { visible }, false).catch(() => undefined)
    },
    setColor(id: string, color: string): void {
      void save(id, { color }, false).catch(() => undefined)
    },
    /** The form's save: errors are the form's to show. */
    saveMatrix(id: string, matrix: number[]): Promise<void> {
      return save(id, { matrix }, true)
    },
    /** The gizmo's live position while dragging (not saved). */
    moveLive(id: string, matrix: number[]): void {
      setOverride(id, { matrix })
    },
    /** Shows a placement at a matrix without saving it (the align tool's "as aligned"), or back (null). */
    preview(id: string, matrix: number[] | null): void {
      if (matrix) setOverride(id, { matrix })
      else clearOverride(id, ['matrix'])
    },
    /** The gizmo was released: one PATCH per drag. */
    saveDrag(id: string, matrix: number[]): void {
      void save(id, { matrix }, false).catch(() => undefined)
    },
    isSaving: computed(() => update.isPending.value || updateInline.isPending.value),
  }
}
