import { computed, toValue, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import type { Project, ProjectCreateBody, ProjectUpdateBody } from '@shared/schemas'
import * as projectsApi from '@/api/projects'
import { queryKeys } from './queryKeys'

export function useProjects() {
  return useQuery({
    queryKey: queryKeys.projects(),
    queryFn: ({ signal }) => projectsApi.listProjects(signal),
    meta: { inlineErrors: true },
  })
}

export function useProject(projectId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.project(toValue(projectId))),
    queryFn: ({ signal }) => projectsApi.getProject(toValue(projectId), signal),
    // The page shows "not found" itself.
    meta: { inlineErrors: true },
  })
}

function useStoreProject() {
  const client = useQueryClient()
  return (project: Project) => {
    client.setQueryData(queryKeys.project(project.id), project)
    void client.invalidateQueries({ queryKey: queryKeys.projects(), exact: true })
  }
}

/** Errors show on the create form. */
export function useCreateProject() {
  const store = useStoreProject()
  return useMutation({
    mutationFn: (body: ProjectCreateBody) => projectsApi.createProject(body),
    onSuccess: store,
    meta: { inlineErrors: true },
  })
}

/** Errors show on the edit form. */
export function useUpdateProject(projectId: MaybeRefOrGetter<string>) {
  const store = useStoreProject()
  return useMutation({
    mutationFn: (body: ProjectUpdateBody) => projectsApi.updateProject(toValue(projectId), body),
    onSuccess: store,
    meta: { inlineErrors: true },
  })
}

export function useDeleteProject(projectId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  return useMutation({
    mutationFn: () => projectsApi.deleteProject(toValue(projectId)),
    onSuccess: () => {
      client.removeQueries({ queryKey: queryKeys.project(toValue(projectId)) })
      void client.invalidateQueries({ queryKey: queryKeys.projects(), exact: true })
    },
    meta: { errorTitle: 'Could not delete the project' },
  })
}
