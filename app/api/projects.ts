import { ProjectList, ProjectResponse, type Project, type ProjectCreateBody, type ProjectUpdateBody } from '@shared/schemas'
import { apiPath, http } from './http'

export async function listProjects(signal?: AbortSignal): Promise<Project[]> {
  return (await http.get('/api/projects', ProjectList, { signal })).projects
}

export async function createProject(body: ProjectCreateBody): Promise<Project> {
  return (await http.post('/api/projects', body, ProjectResponse)).project
}

export async function getProject(projectId: string, signal?: AbortSignal): Promise<Project> {
  return (await http.get(apiPath`/api/projects/${projectId}`, ProjectResponse, { signal })).project
}

export async function updateProject(projectId: string, body: ProjectUpdateBody): Promise<Project> {
  return (await http.patch(apiPath`/api/projects/${projectId}`, body, ProjectResponse)).project
}

export function deleteProject(projectId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/projects/${projectId}`)
}
