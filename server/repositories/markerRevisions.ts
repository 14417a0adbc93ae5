import type { Conn } from '../db'
import type { MarkerWithPeopleRow } from './markers'

export type RevisionAction = 'created' | 'edited' | 'deleted' | 'restored' | 'reviewed' | 'reopened'

/** Review revisions carry the state set (or returned to) and the note. */
export interface RevisionReview {
  reviewState: 'open' | 'changes-asked' | 'signed-off'
  note: string | null
}

export function insertRevision(
  db: Conn,
  row: Pick<MarkerWithPeopleRow, 'id' | 'scene_id' | 'revision' | 'kind' | 'label' | 'anchors' | 'params'>,
  action: RevisionAction,
  userId: string | null,
  review: RevisionReview | null = null,
) {
  return db
    .insertInto('marker_revisions')
    .values({
      marker_id: row.id,
      scene_id: row.scene_id,
      revision: row.revision,
      action,
      state: JSON.stringify({ kind: row.kind, label: row.label, anchors: row.anchors, params: row.params }),
      user_id: userId,
      review_state: review?.reviewState ?? null,
      note: review?.note ?? null,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
}

/**
 * A page of a marker's revisions in one scene (its own: see services/markers.ts historyOf): the `limit` latest
 * before revision `before` (all when absent), oldest first, and the id to ask before for the page before it.
 */
export async function listRevisions(db: Conn, markerId: string, sceneId: string, page: { limit: number; before?: string }) {
  let q = db
    .selectFrom('marker_revisions as r')
    .leftJoin('users as u', 'u.id', 'r.user_id')
    .selectAll('r')
    .select('u.name as user_name')
    .where('r.marker_id', '=', markerId)
    .where('r.scene_id', '=', sceneId)
  if (page.before !== undefined) q = q.where('r.id', '<', page.before)
  const rows = await q.orderBy('r.id', 'desc').limit(page.limit + 1).execute()
  const more = rows.length > page.limit
  const kept = rows.slice(0, page.limit).reverse()
  return { rows: kept, earlier: more ? String(kept[0]!.id) : null }
}

export function findRevision(db: Conn, markerId: string, id: string, sceneId: string) {
  return db.selectFrom('marker_revisions').selectAll().where('marker_id', '=', markerId).where('id', '=', id).where('scene_id', '=', sceneId).executeTakeFirst()
}

/** Each marker's last revision at or before `at` (deleted ones left out): the scene's markers as they were. */
export async function stateAt(db: Conn, sceneId: string, at: Date) {
  const rows = await db
    .selectFrom('marker_revisions as r')
    .leftJoin('users as u', 'u.id', 'r.user_id')
    .selectAll('r')
    .select('u.name as user_name')
    .distinctOn('r.marker_id')
    .where('r.scene_id', '=', sceneId)
    .where('r.created_at', '<=', at)
    .orderBy('r.marker_id')
    .orderBy('r.id', 'desc')
    .execute()
  return rows.filter((r) => r.action !== 'deleted')
}
