import { MemberList, MemberResponse, type Member, type MemberUpdateBody } from '@shared/schemas'
import { apiPath, http } from './http'

export async function listMembers(projectId: string, signal?: AbortSignal): Promise<Member[]> {
  return (await http.get(apiPath`/api/projects/${projectId}/members`, MemberList, { signal })).members
}

/** 409 when the change would leave the project without an owner. */
export async function updateMember(projectId: string, userId: string, body: MemberUpdateBody): Promise<Member> {
  return (await http.patch(apiPath`/api/projects/${projectId}/members/${userId}`, body, MemberResponse)).member
}

export function removeMember(projectId: string, userId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/projects/${projectId}/members/${userId}`)
}
