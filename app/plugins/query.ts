import type { App } from 'vue'
import { MutationCache, QueryCache, QueryClient, VueQueryPlugin } from '@tanstack/vue-query'
import type { ToastServiceMethods } from 'primevue/toastservice'
import { ApiError } from '@/api/http'

/** What a query or mutation may tell the global error handler. */
export interface RequestMeta extends Record<string, unknown> {
  /** The component shows this request's errors itself (inline under fields or as a page state): no toast. */
  inlineErrors?: boolean
  /** Toast title when it fails. */
  errorTitle?: string
}

declare module '@tanstack/vue-query' {
  interface Register {
    defaultError: Error
    queryMeta: RequestMeta
    mutationMeta: RequestMeta
  }
}

let toast: ToastServiceMethods | undefined
let onSignedOut: (() => void) | undefined

/** Called when a request answers 401 although the page thought it was signed in (the session ended). */
export function setSignedOutHandler(handler: () => void): void {
  onSignedOut = handler
}

function report(error: Error, meta: RequestMeta | undefined, fallbackTitle: string): void {
  if (error instanceof ApiError && error.status === 401) {
    onSignedOut?.()
    return
  }
  if (meta?.inlineErrors) return
  toast?.add({ severity: 'error', summary: meta?.errorTitle ?? fallbackTitle, detail: error.message, life: 7000 })
}

function shouldRetry(failureCount: number, error: Error): boolean {
  // A 4xx answer will not change by asking again.
  if (error instanceof ApiError && error.status >= 400 && error.status < 500) return false
  return failureCount < 2
}

export const queryClient = new QueryClient({
  queryCache: new QueryCache({
    onError: (error, query) => report(error, query.meta, 'Could not load'),
  }),
  mutationCache: new MutationCache({
    onError: (error, _variables, _result, mutation) => report(error, mutation.meta, 'Could not save'),
  }),
  defaultOptions: {
    queries: { staleTime: 30_000, retry: shouldRetry },
    mutations: { retry: false },
  },
})

/** Install after ToastService: the global error handler uses its toast. */
export function installQuery(app: App): void {
  toast = app.config.globalProperties.$toast
  app.use(VueQueryPlugin, { queryClient })
}
