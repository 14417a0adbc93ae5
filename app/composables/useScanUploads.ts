import { computed, markRaw, onScopeDispose, reactive, toValue, watch, type MaybeRefOrGetter } from 'vue'
import { useMutation } from '@tanstack/vue-query'
import { isApiError } from '@/api/http'
import * as scansApi from '@/api/scans'
import * as uploadsApi from '@/api/uploads'
import { formatBytes } from '@/lib/format'
import { useScanCache } from './useScans'

/** What the server states by default (UPLOAD_RESUMABLE_LIMIT_BYTES); a 413 tells the real figure, which then replaces it. */
export const DEFAULT_UPLOAD_LIMIT_BYTES = 100 * 1024 ** 3

/** Files sent at the same time; the rest wait their turn. */
const PARALLEL = 2

export type TransferState = 'waiting' | 'sending' | 'failed'

/** One chosen file on its way to the server. Once the server has queued it, it leaves this list for the scans. */
export interface Transfer {
  id: number
  file: File
  loaded: number
  total: number
  state: TransferState
  error: string | null
  /** Parts storage already held when the upload started (a resume), of `partCount`; 0 for a fresh upload. */
  heldAtStart: number
  partCount: number
}

function isAbort(error: unknown): boolean {
  return error instanceof DOMException && error.name === 'AbortError'
}

/**
 * Uploads chosen files as resumable uploads (api/uploads.ts: parts straight to object storage, a few at a
 * time; choosing a file again after a reload sends only its missing parts), each with its own progress.
 * A successful upload puts the queued scan into the list, where its processing is followed. Leaving the
 * page cancels what is still on its way; closing the tab meanwhile asks first.
 */
export function useScanUploads(projectId: MaybeRefOrGetter<string>) {
  const cache = useScanCache()
  const transfers = reactive<Transfer[]>([])
  const controllers = new Map<number, AbortController>()
  const limit = reactive({ bytes: DEFAULT_UPLOAD_LIMIT_BYTES, fromServer: false })
  let nextId = 1

  // Through the query library, so a 401 sends the user to sign in like every other request.
  const upload = useMutation({
    mutationFn: (input: { file: File; signal: AbortSignal; onProgress: (p: uploadsApi.ResumableProgress) => void }) =>
      uploadsApi.uploadResumable(toValue(projectId), input.file, { signal: input.signal, onProgress: input.onProgress }),
    meta: { inlineErrors: true },
  })

  function find(id: number): Transfer | undefined {
    return transfers.find((t) => t.id === id)
  }

  function remove(id: number): void {
    const at = transfers.findIndex((t) => t.id === id)
    if (at !== -1) transfers.splice(at, 1)
  }

  function tooLarge(file: File): string | null {
    if (!limit.fromServer || file.size <= limit.bytes) return null
    return `${formatBytes(file.size)} is over the upload limit of ${formatBytes(limit.bytes)}; nothing was sent.`
  }

  async function send(transfer: Transfer): Promise<void> {
    const controller = new AbortController()
    controllers.set(transfer.id, controller)
    transfer.state = 'sending'
    transfer.error = null
    transfer.loaded = 0
    try {
      const scan = await upload.mutateAsync({
        file: transfer.file,
        signal: controller.signal,
        onProgress: (p) => {
          transfer.loaded = p.loaded
          transfer.total = p.total
          transfer.heldAtStart = p.heldAtStart
          transfer.partCount = p.partCount
        },
      })
      cache.put(scan)
      remove(transfer.id)
    } catch (error) {
      if (isAbort(error)) {
        remove(transfer.id)
        return
      }
      const found = find(transfer.id)
      if (!found) return
      found.state = 'failed'
      found.error = error instanceof Error ? error.message : 'The upload failed.'
      if (isApiError(error)) {
        const bytes = scansApi.uploadLimitFrom(error)
        if (bytes !== null) Object.assign(limit, { bytes, fromServer: true })
      }
    } finally {
      controllers.delete(transfer.id)
      pump()
    }
  }

  function pump(): void {
    let sending = transfers.filter((t) => t.state === 'sending').length
    for (const transfer of transfers) {
      if (sending >= PARALLEL) return
      if (transfer.state !== 'waiting') continue
      sending++
      void send(transfer)
    }
  }

  function add(files: readonly File[]): void {
    for (const file of files) {
      const error = tooLarge(file)
      transfers.push({ id: nextId++, file: markRaw(file), loaded: 0, total: file.size, state: error ? 'failed' : 'waiting', error, heldAtStart: 0, partCount: 0 })
    }
    pump()
  }

  /** Stops a file on its way (or takes a waiting one off the list). */
  function cancel(id: number): void {
    const controller = controllers.get(id)
    if (controller) controller.abort()
    else remove(id)
  }

  function retry(id: number): void {
    const transfer = find(id)
    if (!transfer || transfer.state !== 'failed') return
    const error = tooLarge(transfer.file)
    if (error) {
      transfer.error = error
      return
    }
    transfer.state = 'waiting'
    transfer.error = null
    pump()
  }

  const busy = computed(() => transfers.some((t) => t.state !== 'failed'))

  function warnBeforeLeaving(event: BeforeUnloadEvent): void {
    event.preventDefault()
  }
  watch(busy, (now) => {
    if (now) window.addEventListener('beforeunload', warnBeforeLeaving)
    else window.removeEventListener('beforeunload', warnBeforeLeaving)
  })

  onScopeDispose(() => {
    window.removeEventListener('beforeunload', warnBeforeLeaving)
    for (const controller of controllers.values()) controller.abort()
  })

  return { transfers, limit, busy, add, cancel, retry, dismiss: remove }
}
