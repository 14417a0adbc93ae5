import { onBeforeUnmount, onMounted, ref, toValue, watch, type MaybeRefOrGetter, type Ref } from 'vue'
import { useQueryClient } from '@tanstack/vue-query'
import * as Y from 'yjs'
import { WebsocketProvider } from 'y-websocket'
import { CLOSE_CODES, LiveInstance, LiveMarker, LiveRecord, RECORD_MAPS, WORK_MAPS, markerFromDocuments } from '@shared/collab/documents'
import type { Marker, Scene } from '@shared/schemas'
import { ROLE_LABELS, ROLES, type Role } from '@shared/auth/roles'
import { queryKeys } from './queryKeys'

export type LiveStatus = 'connecting' | 'online' | 'offline' | 'refused'

/** A line for the top bar: 'problem' when something was not kept or access ended, 'info' otherwise. */
export interface LiveNotice {
  text: string
  tone: 'info' | 'problem'
}

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

/** What a page writes into the work document (the server checks and stores it, or puts it back). */
export interface LiveWriter {
  /** Both documents have come from the server at least once: the page reads and writes through them. */
  ready: Ref<boolean>
  status: Ref<LiveStatus>
  /** Placement id to its matrix, as the work document holds them. */
  matrices(): Map<string, number[]>
  putMarker(markerId: string, entry: LiveMarker): void
  deleteMarker(markerId: string): void
}

/**
 * The scene's live documents (y-websocket's provider over /collab). Once both have synced, they are what the
 * page shows: every change, by anyone, goes straight into the query cache of the scene's markers (the work
 * entry with its record entry) and of its placements' matrices, without asking the API again. Edits go into
 * the work document; while the connection is down they stay in it and merge when it comes back (Yjs), and
 * the page says it is offline. Awareness is the "here now" strip; the server names each person from their
 * session.
 */
export function useLiveScene(sceneId: MaybeRefOrGetter<string>) {
  const client = useQueryClient()
  const status = ref<LiveStatus>('connecting')
  /** A short line for the top bar when the server closed the connection for a reason worth saying. */
  const notice = ref<LiveNotice | null>(null)
  let noticeTimer: ReturnType<typeof setTimeout> | null = null
  function say(text: string, tone: LiveNotice['tone'] = 'problem'): void {
    notice.value = { text, tone }
    if (noticeTimer) clearTimeout(noticeTimer)
    noticeTimer = setTimeout(() => (notice.value = null), 15_000)
  }
  const ready = ref(false)
  const people = ref<HereNow[]>([])
  let work: WebsocketProvider | null = null
  let record: WebsocketProvider | null = null
  let workDoc: Y.Doc | null = null
  let recordDoc: Y.Doc | null = null
  let mirror: ReturnType<typeof setTimeout> | null = null
  let objectsRefetch: ReturnType<typeof setTimeout> | null = null
  /** Markers whose work entry changed after their record entry last did: shown as pending until it moves. */
  const awaiting = new Set<string>()

  function matrices(): Map<string, number[]> {
    const out = new Map<string, number[]>()
    workDoc?.getMap<unknown>(WORK_MAPS.instances).forEach((value, id) => {
      const parsed = LiveInstance.safeParse(value)
      if (parsed.success) out.set(id, parsed.data.matrix)
    })
    return out
  }

  /** The documents into the query cache: the markers whole, the placements' matrices, visibility and colours. */
  function mirrorNow(id: string): void {
    mirror = null
    if (!workDoc || !recordDoc || !ready.value) return
    const now = new Date().toISOString()
    const m = matrices()
    const records = recordDoc.getMap<unknown>(RECORD_MAPS.markers)
    const list: Marker[] = []
    workDoc.getMap<unknown>(WORK_MAPS.markers).forEach((value, markerId) => {
      const entry = LiveMarker.safeParse(value)
      if (!entry.success) return
      const rec = LiveRecord.safeParse(records.get(markerId))
      list.push(markerFromDocuments(markerId, id, entry.data, rec.success ? rec.data : undefined, m, awaiting.has(markerId), now))
    })
    list.sort((a, b) => a.createdAt.localeCompare(b.createdAt) || a.id.localeCompare(b.id))
    client.setQueryData<Marker[]>(queryKeys.markers(id), list)
    const instances = workDoc.getMap<unknown>(WORK_MAPS.instances)
    const scene = client.getQueryData<Scene>(queryKeys.scene(id))
    if (!scene) return
    // A placement added or removed needs the API (its scan's name and times); a moved one does not.
    if (scene.instances.length !== instances.size || scene.instances.some((i) => !instances.has(i.id))) {
      void client.invalidateQueries({ queryKey: queryKeys.scene(id), exact: true })
      return
    }
    let changed = false
    const next = scene.instances.map((i) => {
      const parsed = LiveInstance.safeParse(instances.get(i.id))
      if (!parsed.success) return i
      const { matrix, visible, color } = parsed.data
      if (visible === i.visible && color === i.color && matrix.every((v, k) => v === i.matrix[k])) return i
      changed = true
      return { ...i, matrix, visible, color }
    })
    if (changed) client.setQueryData<Scene>(queryKeys.scene(id), { ...scene, instances: next })
  }

  function mirrorSoon(id: string): void {
    // One mirror per task: a burst of changes (a sync, a drag) is gathered.
    if (mirror === null) mirror = setTimeout(() => mirrorNow(id), 0)
  }

  function stop(): void {
    if (mirror) clearTimeout(mirror)
    mirror = null
    if (objectsRefetch) clearTimeout(objectsRefetch)
    objectsRefetch = null
    work?.destroy()
    record?.destroy()
    workDoc?.destroy()
    recordDoc?.destroy()
    work = record = null
    workDoc = recordDoc = null
    ready.value = false
    awaiting.clear()
  }

  function start(id: string): void {
    stop()
    status.value = 'connecting'
    const base = `${location.origin.replace(/^http/, 'ws')}/collab`
    const wDoc = new Y.Doc(), rDoc = new Y.Doc()
    workDoc = wDoc
    recordDoc = rDoc
    work = new WebsocketProvider(base, id, wDoc, { disableBc: true })
    record = new WebsocketProvider(base, `${id}/record`, rDoc, { disableBc: true })
    const provider = work
    const synced = { work: false, record: false }
    const onSync = (which: 'work' | 'record') => (isSynced: boolean) => {
      if (!isSynced || synced[which]) return
      synced[which] = true
      if (synced.work && synced.record) {
        ready.value = true
        mirrorNow(id)
      }
    }
    work.on('sync', onSync('work'))
    record.on('sync', onSync('record'))
    provider.on('status', ({ status: s }: { status: string }) => {
      if (status.value === 'refused') return
      status.value = s === 'connected' ? 'online' : s === 'connecting' && status.value === 'connecting' ? 'connecting' : 'offline'
    })
    // y-websocket treats every 44xx close as final (its default shouldReconnect); a new role or a new session
    // is worth a reconnect, which provider.connect() makes once the close has been handled.
    const onClose = (event: CloseEvent | null, closedProvider: WebsocketProvider) => {
      const code = event?.code
      const reason = String(event?.reason ?? '')
      if (code === CLOSE_CODES.forbidden || code === CLOSE_CODES.unauthenticated || code === CLOSE_CODES.badOrigin || code === CLOSE_CODES.accessEnded) {
        status.value = 'refused'
        work!.shouldConnect = false
        record!.shouldConnect = false
        if (code === CLOSE_CODES.accessEnded) say(`Not live: ${reason || 'your access to this project ended'}.`)
        // Refused mid-visit (a revoked viewing pass, a removed member): asking the API again lets the page say why.
        void client.invalidateQueries({ queryKey: queryKeys.scene(id), exact: true })
      } else if (code === CLOSE_CODES.roleChanged) {
        // Reconnected, the server gives the new role; the page's controls follow it.
        const role = /now (\w+)$/.exec(reason)?.[1]
        say(ROLES.includes(role as Role) ? `Your role here is now ${ROLE_LABELS[role as Role].toLowerCase()}: reconnected with it.` : 'Your role here changed: reconnected with it.', 'info')
        void client.invalidateQueries({ queryKey: ['projects'] })
        setTimeout(() => closedProvider.connect(), 0)
      } else if (code === CLOSE_CODES.signedOut) {
        // Signed out elsewhere, or a new password: with a new session in this browser (a password changed
        // here) the connection comes back; without one the server answers "sign in first" and the page says so.
        setTimeout(() => closedProvider.connect(), 0)
      } else if (code === CLOSE_CODES.tooMuch) {
        // One of the connection's caps (too many messages a second, too much left unread): nothing it holds is
        // lost; it reconnects after a pause and sends what the server lacks.
        say(`Live connection paused: ${reason || 'too much at once'}. Reconnecting.`, 'info')
        setTimeout(() => closedProvider.connect(), 2000)
      } else if (code === CLOSE_CODES.refused || code === CLOSE_CODES.readOnly) {
        // The server refused a change this page made and applied none of it. Sending the same document again
        // would be refused again: start afresh from the server's, and say what was not kept.
        say(`Not saved: ${reason || 'a change was refused'}. The scene now shows what the server holds.`)
        setTimeout(() => {
          if (workDoc === wDoc) start(id)
        }, 0)
      }
    }
    work.on('connection-close', onClose)
    record.on('connection-close', onClose)
    // Only this page's own edits wait for their record entry: the server answers each with one. Another
    // person's edit reaches here on the work document and its record entry on the record document, in either
    // order, so the record alone speaks for those (the server writes "pending" as soon as it has the edit).
    wDoc.getMap(WORK_MAPS.markers).observe((event) => {
      if (ready.value && event.transaction.local) for (const key of event.keysChanged) awaiting.add(key)
      mirrorSoon(id)
    })
    wDoc.getMap(WORK_MAPS.instances).observe(() => mirrorSoon(id))
    // Objects and trims are read through the API (it gives trims in the scene frame, with counts): a change
    // by anyone asks for them again, once per burst.
    const refetchObjects = () => {
      if (objectsRefetch !== null) return
      objectsRefetch = setTimeout(() => {
        objectsRefetch = null
        void client.invalidateQueries({ queryKey: queryKeys.objects(id) })
        void client.invalidateQueries({ queryKey: queryKeys.sceneCuts(id) })
      }, 0)
    }
    wDoc.getMap(WORK_MAPS.objects).observe(refetchObjects)
    wDoc.getMap(WORK_MAPS.trims).observe(refetchObjects)
    rDoc.getMap(RECORD_MAPS.markers).observe((event) => {
      for (const key of event.keysChanged) awaiting.delete(key)
      mirrorSoon(id)
    })
    const awareness = provider.awareness
    awareness.setLocalState({ cursor: null, editing: null })
    awareness.on('change', () => {
      const list: HereNow[] = []
      for (const [clientId, state] of awareness.getStates()) {
        const s = state as { user?: { name?: string }; cursor?: [number, number, number] | null; editing?: string | null }
        if (!s.user?.name && clientId !== wDoc.clientID) continue
        list.push({
          clientId,
          name: s.user?.name ?? 'you',
          colour: PEOPLE_COLOURS[clientId % PEOPLE_COLOURS.length]!,
          cursor: s.cursor ?? null,
          editing: s.editing ?? null,
          self: clientId === wDoc.clientID,
        })
      }
      people.value = list.sort((a, b) => Number(b.self) - Number(a.self) || a.name.localeCompare(b.name))
    })
  }

  watch(() => toValue(sceneId), (id) => start(id), { immediate: true })
  onBeforeUnmount(() => {
    stop()
    if (noticeTimer) clearTimeout(noticeTimer)
  })

  const writer: LiveWriter = {
    ready,
    status,
    matrices,
    putMarker(markerId, entry) {
      workDoc?.transact(() => workDoc!.getMap(WORK_MAPS.markers).set(markerId, entry))
    },
    deleteMarker(markerId) {
      workDoc?.transact(() => workDoc!.getMap(WORK_MAPS.markers).delete(markerId))
    },
  }

  return {
    status,
    /** Why the server last closed the connection, when it is worth saying (a role change, a refused change). */
    notice,
    ready,
    people,
    writer,
    /** Where this person's pointer is (scene frame), for the others. */
    setCursor(point: [number, number, number] | null): void {
      work?.awareness.setLocalStateField('cursor', point)
    },
    setEditing(markerId: string | null): void {
      work?.awareness.setLocalStateField('editing', markerId)
    },
    /** Drops the connections (as a lost network would) and makes them again: for the reconnect test. */
    disconnect(): void {
      work?.disconnect()
      record?.disconnect()
    },
    connect(): void {
      work?.connect()
      record?.connect()
    },
  }
}

/** `window.__spanmark.live` for browser tests: the live status, who is here now, how many pointers are drawn. */
export function installLiveTestHook(live: ReturnType<typeof useLiveScene>, cursorsDrawn: () => number): void {
  const w = window as unknown as { __spanmark?: Record<string, unknown> }
  onMounted(() => {
    w.__spanmark = {
      ...w.__spanmark,
      live: {
        status: () => live.status.value,
        notice: () => live.notice.value?.text ?? null,
        ready: () => live.ready.value,
        people: () => live.people.value,
        cursorsDrawn,
        disconnect: () => live.disconnect(),
        connect: () => live.connect(),
      },
    }
  })
  onBeforeUnmount(() => {
    if (w.__spanmark) delete w.__spanmark.live
  })
}
