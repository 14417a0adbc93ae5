import { ref } from 'vue'
import { takeFragmentToken } from '@/lib/fragmentToken'

/** The password reset link's one-time token (`#token=...`), taken out of the address at once; null without one. */
export function useResetToken() {
  return ref(takeFragmentToken())
}
