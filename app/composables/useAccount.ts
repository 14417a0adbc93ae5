import { useMutation } from '@tanstack/vue-query'
import type { ChangePasswordBody, UpdateMeBody } from '@shared/schemas'
import * as meApi from '@/api/me'
import { useSessionStore } from '@/stores/session'

/** Errors show on the name form. */
export function useUpdateName() {
  const session = useSessionStore()
  return useMutation({
    mutationFn: (body: UpdateMeBody) => meApi.updateMe(body),
    onSuccess: (user) => session.setUser(user),
    meta: { inlineErrors: true },
  })
}

/** Errors show on the password form (a wrong current password comes back under that field). */
export function useChangePassword() {
  return useMutation({
    mutationFn: (body: ChangePasswordBody) => meApi.changePassword(body),
    meta: { inlineErrors: true },
  })
}
