import { onBeforeUnmount, onMounted, ref, toValue, watch, type MaybeRefOrGetter } from 'vue'
import { useQueryClient } from '@tanstack/vue-query'
import * as Y from 'yjs'
import { WebsocketProvider } from 'y-websocket'
import { CLOSE_CODES, RECORD_MAPS, WORK_MAPS } from '@shared/collab/documents'
import { queryKeys } from './queryKeys'

export type LiveStatus = 'connecting' | 'online' | 'offline' | 'refused'

export interface HereNow {
  clientId: number
  name: string
  colour: string
  /** Scene-frame point under the person's pointer, when they have one. */
  cursor: [number, number, number] | null
  editing: string | null
  self: boolean
}

/** Colours for people here now: Spanmark's own, apart from the marker kinds' and the placements'. */
const PEOPLE_COLOURS = ['#B5651D', '#3F7F6F', '#7A5C99', '#A23E48', '#4F6D2F', '#2F5D8A', '#8A6D1F', '#6B4E3D']

/**
 * The scene's live documents (y-websocket's provider over /collab): any change in them, by anyone, refreshes
 * the markers and placements the page shows (the API stays the page's reader and writer for now), and their
 * awareness is the "here now" strip. The server names each person from their session.
 */
export function useLiveScene(sceneId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  const status = ref<LiveStatus>('connecting')
  const people = ref<HereNow[]>([])
  let work: WebsocketProvider | null = null
  let record: WebsocketProvider | null = null
  let refresh: ReturnType<typeof setTimeout> | null = null

  function refreshSoon(id: string): void {
    if (refresh) return
    refresh = setTimeout(() => {
      refresh = null
      void client.invalidateQueries({ queryKey: queryKeys.markers(id) })
      void client.invalidateQueries({ queryKey: queryKeys.scene(id), exact: true })
    }, 30)
  }

  function stop(): void {
    work?.destroy()
    record?.destroy()
    work = record = null
  }

  function start(id: string): void {
    stop()
    const base = `${location.origin.replace(/^http/, 'ws')}/collab`
    const workDoc = new Y.Doc(), recordDoc = new Y.Doc()
    work = new WebsocketProvider(base, id, workDoc, { disableBc: true })
    record = new WebsocketProvider(base, `${id}/record`, recordDoc, { disableBc: true })
    const provider = work
    provider.on('status', ({ status: s }: { status: string }) => {
      if (status.value === 'refused') return
      status.value = s === 'connected' ? 'online' : s === 'connecting' && status.value === 'connecting' ? 'connecting' : 'offline'
    })
    provider.on('connection-close', (event: CloseEvent | null) => {
      const code = event?.code
      if (code === CLOSE_CODES.forbidden || code === CLOSE_CODES.unauthenticated || code === CLOSE_CODES.badOrigin) {
        status.value = 'refused'
        provider.shouldConnect = false
        // Refused mid-visit (a revoked viewing pass, a removed member): asking the API again lets the page say why.
        void client.invalidateQueries({ queryKey: queryKeys.scene(id), exact: true })
      }
    })
    workDoc.getMap(WORK_MAPS.markers).observe(() => refreshSoon(id))
    workDoc.getMap(WORK_MAPS.instances).observe(() => refreshSoon(id))
    recordDoc.getMap(RECORD_MAPS.markers).observe(() => refreshSoon(id))
    const awareness = provider.awareness
    awareness.setLocalState({ cursor: null, editing: null })
    awareness.on('change', () => {
      const list: HereNow[] = []
      for (const [clientId, state] of awareness.getStates()) {
        const s = state as { user?: { name?: string }; cursor?: [number, number, number] | null; editing?: string | null }
        if (!s.user?.name && clientId !== workDoc.clientID) continue
        list.push({
          clientId,
          name: s.user?.name ?? 'you',
          colour: PEOPLE_COLOURS[clientId % PEOPLE_COLOURS.length]!,
          cursor: s.cursor ?? null,
          editing: s.editing ?? null,
          self: clientId === workDoc.clientID,
        })
      }
      people.value = list.sort((a, b) => Number(b.self) - Number(a.self) || a.name.localeCompare(b.name))
    })
  }

  watch(() => toValue(sceneId), (id) => start(id), { immediate: true })
  onBeforeUnmount(() => {
    if (refresh) clearTimeout(refresh)
    stop()
  })

  return {
    status,
    people,
    /** Where this person's pointer is (scene frame), for the others. */
    setCursor(point: [number, number, number] | null): void {
      work?.awareness.setLocalStateField('cursor', point)
    },
    setEditing(markerId: string | null): void {
      work?.awareness.setLocalStateField('editing', markerId)
    },
  }
}

/** `window.__spanmark.live` for browser tests: the live status, who is here now, how many pointers are drawn. */
export function installLiveTestHook(live: ReturnType<typeof useLiveScene>, cursorsDrawn: () => number): void {
  const w = window as unknown as { __spanmark?: Record<string, unknown> }
  onMounted(() => {
    w.__spanmark = { ...w.__spanmark, live: { status: () => live.status.value, people: () => live.people.value, cursorsDrawn } }
  })
  onBeforeUnmount(() => {
    if (w.__spanmark) delete w.__spanmark.live
  })
}
