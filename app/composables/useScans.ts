import { computed, toValue, watch, type MaybeRefOrGetter } from 'vue'
import { useMutation, useQuery, useQueryClient } from '@tanstack/vue-query'
import type { Scan, ScanUpdateBody } from '@shared/schemas'
import { ApiError } from '@/api/http'
import * as scansApi from '@/api/scans'
import { queryKeys } from './queryKeys'

/** How often a scan that is queued or processing is asked for its progress. */
export const SCAN_POLL_MS = 700

export function isScanActive(scan: Pick<Scan, 'status'>): boolean {
  return scan.status === 'queued' || scan.status === 'processing'
}

/** The project's scans, newest first (the server's order). */
export function useScans(projectId: MaybeRefOrGetter<string>) {
  return useQuery({
    queryKey: computed(() => queryKeys.scans(toValue(projectId))),
    queryFn: ({ signal }) => scansApi.listScans(toValue(projectId), signal),
    meta: { errorTitle: 'Could not load the scans' },
  })
}

/**
 * The project's scan list in the cache is what every scan card reads; uploads, polls and edits write
 * their answer into it. Nothing is written before the list itself has loaded, so a partial list never
 * passes for the whole one.
 */
export function useScanCache() {
  const client = useQueryClient()
  return {
    put(scan: Scan): void {
      client.setQueryData<Scan[]>(queryKeys.scans(scan.projectId), (list) => {
        if (!list) return list
        const at = list.findIndex((s) => s.id === scan.id)
        if (at === -1) return [scan, ...list]
        const next = list.slice()
        next[at] = scan
        return next
      })
    },
    drop(projectId: string, scanId: string): void {
      client.setQueryData<Scan[]>(queryKeys.scans(projectId), (list) => list?.filter((s) => s.id !== scanId))
      client.removeQueries({ queryKey: queryKeys.scan(scanId) })
    },
    refresh(projectId: string): Promise<void> {
      return client.invalidateQueries({ queryKey: queryKeys.scans(projectId), exact: true })
    },
  }
}

/**
 * Follows one scan while it is queued or processing: GET /api/scans/:id every SCAN_POLL_MS, each answer
 * written into the list, so the card shows its progress and stage and then its stats. Polling stops by
 * itself once the scan is ready or failed (or a poll fails; `retry` starts it again). A scan deleted
 * meanwhile (404) leaves the list.
 */
export function useScanProgress(scan: MaybeRefOrGetter<Scan>) {
  const cache = useScanCache()
  const query = useQuery({
    queryKey: computed(() => queryKeys.scan(toValue(scan).id)),
    queryFn: ({ signal }) => scansApi.getScan(toValue(scan).id, signal),
    enabled: computed(() => isScanActive(toValue(scan))),
    staleTime: 0,
    refetchInterval: (q) => (q.state.status === 'error' || (q.state.data && !isScanActive(q.state.data)) ? false : SCAN_POLL_MS),
    // The card says it lost track; a toast every 700 ms would not help.
    meta: { inlineErrors: true },
  })

  watch(query.data, (fresh) => {
    if (fresh) cache.put(fresh)
  })
  watch(query.error, (error) => {
    const current = toValue(scan)
    if (error instanceof ApiError && error.status === 404) void cache.refresh(current.projectId)
  })

  return {
    /** Why the last poll failed, while it is not running again. */
    error: computed(() => (query.isFetching.value ? null : query.error.value)),
    retry: () => void query.refetch(),
  }
}

/** Rename or set the point uncertainty; errors show on the dialog's form. */
export function useUpdateScan() {
  const cache = useScanCache()
  return useMutation({
    mutationFn: (input: { scanId: string; body: ScanUpdateBody }) => scansApi.updateScan(input.scanId, input.body),
    onSuccess: (scan) => cache.put(scan),
    meta: { inlineErrors: true },
  })
}

export function useDeleteScan(projectId: MaybeRefOrGetter<string>) {
  const cache = useScanCache()
  return useMutation({
    mutationFn: (scanId: string) => scansApi.deleteScan(scanId),
    onSuccess: (_result, scanId) => cache.drop(toValue(projectId), scanId),
    meta: { errorTitle: 'Scan not deleted' },
  })
}
