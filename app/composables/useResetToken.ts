import { ref } from 'vue'
import { takeFragmentToken } from './useFragmentToken'

/** The password reset link's one-time token (`#token=...`), taken out of the address at once; null without one. */
export function useResetToken() {
  return ref(takeFragmentToken())
}
