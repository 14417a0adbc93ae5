import { useRouter } from 'vue-router'
import { useConfirm } from 'primevue/useconfirm'
import { useToast } from 'primevue/usetoast'
import type { Project } from '@shared/schemas'
import { useDeleteProject } from './useProjects'

/** Asks first, then deletes and returns to the projects list. */
export function useProjectDeletion(project: () => Project | undefined) {
  const del = useDeleteProject(() => project()?.id ?? '')
  const confirm = useConfirm()
  const toast = useToast()
  const router = useRouter()

  return function askToDelete(): void {
    const current = project()
    if (!current) return
    confirm.require({
      header: `Delete “${current.name}”?`,
      message: 'The project and everything in it go for good, for every member. This cannot be undone.',
      acceptProps: { label: 'Delete project', severity: 'danger', 'data-testid': 'confirm-accept' },
      rejectProps: { label: 'Keep it', severity: 'secondary', text: true, 'data-testid': 'confirm-reject' },
      accept: async () => {
        try {
          await del.mutateAsync()
        } catch {
          return // shown by the global handler
        }
        toast.add({ severity: 'success', summary: 'Project deleted', detail: `“${current.name}” is gone.`, life: 4000 })
        await router.replace('/projects')
      },
    })
  }
}
