import { PassList, PassOpened, PassResponse, type GuestSession, type Pass, type PassCreateBody } from '@shared/schemas'
import { apiPath, http } from './http'

/** A project's viewing passes, revoked and expired ones included. Owners only. */
export async function listPasses(projectId: string, signal?: AbortSignal): Promise<Pass[]> {
  return (await http.get(apiPath`/api/projects/${projectId}/passes`, PassList, { signal })).passes
}

export async function createPass(projectId: string, body: PassCreateBody): Promise<Pass> {
  return (await http.post(apiPath`/api/projects/${projectId}/passes`, body, PassResponse)).pass
}

export function revokePass(passId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/passes/${passId}`)
}

/** Swaps the e-mailed one-time token for the guest session cookie (set by the answer). */
export async function openPass(token: string): Promise<GuestSession> {
  return (await http.post('/api/passes/open', { token }, PassOpened)).guest
}
