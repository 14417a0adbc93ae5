import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import * as devMailApi from '@/api/devMail'
import { ApiError } from '@/api/http'
import { queryKeys } from './queryKeys'

const POLL_MS = 2000

/** The dev mailbox, polled every 2 s. A 404 (production: no mailbox) stops the polling. */
export function useDevMail() {
  return useQuery({
    queryKey: queryKeys.devMail(),
    queryFn: ({ signal }) => devMailApi.listDevMail(signal),
    refetchInterval: (query) => (query.state.error instanceof ApiError && query.state.error.status === 404 ? false : POLL_MS),
    staleTime: 0,
    // Polling would repeat a toast every 2 s: the page shows the error instead.
    meta: { inlineErrors: true },
  })
}

export function useClearDevMail() {
  const client = useQueryClient()
  return useMutation({
    mutationFn: () => devMailApi.clearDevMail(),
    onSuccess: () => client.setQueryData(queryKeys.devMail(), []),
    meta: { errorTitle: 'Mailbox not cleared' },
  })
}
