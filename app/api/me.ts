import { MeResponse, type ChangePasswordBody, type UpdateMeBody, type User } from '@shared/schemas'
import { http } from './http'

// Who is signed in (or holding a viewing pass) comes from GET /api/session (api/session.ts).

export async function updateMe(body: UpdateMeBody): Promise<User> {
  return (await http.patch('/api/me', body, MeResponse)).user
}

/** 204; the server signs out the user's other sessions. */
export function changePassword(body: ChangePasswordBody): Promise<void> {
  return http.postNoContent('/api/me/password', body)
}
