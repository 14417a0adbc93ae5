// A live-document client in Node: y-websocket's own provider on ws, with a session cookie and an Origin
// header (a browser sends both by itself), as the ws package's client allows.
import WebSocket from 'ws'
import * as Y from 'yjs'
import { WebsocketProvider } from 'y-websocket'
import { WORK_MAPS } from '@shared/collab/documents'

export interface LiveClient {
  doc: Y.Doc
  provider: WebsocketProvider
  markers: Y.Map<unknown>
}

/** Resolves once the provider has its first full sync with the server. */
export const synced = (p: WebsocketProvider) => new Promise<void>((resolve) => (p.synced ? resolve() : p.once('sync', (s: boolean) => s && resolve())))

/**
 * Connects to `/collab/<path>` of the server at `url` (path: a scene id, or `<scene id>/record`). `doc`: the
 * client's document when it already has one (a client moving to another server keeps what it holds).
 */
export function liveClient(url: string, cookie: string | null, path: string, origin: string = url, doc: Y.Doc = new Y.Doc()): LiveClient {
  const headers: Record<string, string> = { origin }
  if (cookie) headers.cookie = cookie
  class CookieSocket extends WebSocket {
    constructor(u: string, protocols?: string | string[]) {
      super(u, protocols, { headers })
    }
  }
  const provider = new WebsocketProvider(`${url.replace(/^http/, 'ws')}/collab`, path, doc, { WebSocketPolyfill: CookieSocket as unknown as typeof globalThis.WebSocket, disableBc: true })
  return { doc, provider, markers: doc.getMap<unknown>(WORK_MAPS.markers) }
}
