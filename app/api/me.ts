import { MeResponse, type ChangePasswordBody, type UpdateMeBody, type User } from '@shared/schemas'
import { ApiError, http } from './http'

/** The signed-in user, or null when signed out (401). */
export async function getMe(): Promise<User | null> {
  try {
    return (await http.get('/api/me', MeResponse)).user
  } catch (error) {
    if (error instanceof ApiError && error.status === 401) return null
    throw error
  }
}

export async function updateMe(body: UpdateMeBody): Promise<User> {
  return (await http.patch('/api/me', body, MeResponse)).user
}

/** 204; the server signs out the user's other sessions. */
export function changePassword(body: ChangePasswordBody): Promise<void> {
  return http.postNoContent('/api/me/password', body)
}
