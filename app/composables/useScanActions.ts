import { computed, ref, type MaybeRefOrGetter } from 'vue'
import { useConfirm } from 'primevue/useconfirm'
import { useToast } from 'primevue/usetoast'
import type { Scan } from '@shared/schemas'
import { formatBytes } from '@/lib/format'
import { useDeleteScan } from './useScans'

/** The scan list's actions: which dialog is open for which scan, and deletion after a confirm. */
export function useScanActions(projectId: MaybeRefOrGetter<string>) {
  const del = useDeleteScan(projectId)
  const confirm = useConfirm()
  const toast = useToast()
  const renaming = ref<Scan | null>(null)
  const settingUncertainty = ref<Scan | null>(null)

  function remove(scan: Scan): void {
    confirm.require({
      header: `Delete “${scan.name}”?`,
      message:
        `Its tiles and its original file (${scan.fileName}, ${formatBytes(scan.sizeBytes)}) are deleted for good, ` +
        'for every member of the project. This cannot be undone.',
      acceptProps: { label: 'Delete scan', severity: 'danger', 'data-testid': 'confirm-accept' },
      rejectProps: { label: 'Keep it', severity: 'secondary', text: true, 'data-testid': 'confirm-reject' },
      accept: async () => {
        try {
          await del.mutateAsync(scan.id)
        } catch {
          return // shown by the global handler
        }
        toast.add({ severity: 'success', summary: 'Scan deleted', detail: `“${scan.name}”, its tiles and its original are gone.`, life: 4000 })
      },
    })
  }

  /** The scan being deleted, whose card's buttons wait. */
  const deletingId = computed(() => (del.isPending.value ? (del.variables.value ?? null) : null))

  return { renaming, settingUncertainty, remove, deletingId }
}
