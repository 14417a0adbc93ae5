import type { Conn } from '../db'
import type { DocumentKind } from '@shared/collab/documents'

export function insertUpdate(db: Conn, sceneId: string, doc: DocumentKind, update: Uint8Array, userId: string | null) {
  return db.insertInto('scene_updates').values({ scene_id: sceneId, doc, update: Buffer.from(update), user_id: userId }).returning('id').executeTakeFirstOrThrow()
}

/** The latest snapshot (if any) and every update after it, oldest first. */
export async function loadDocumentLog(db: Conn, sceneId: string, doc: DocumentKind): Promise<{ snapshot: Buffer | null; updates: Buffer[]; lastId: string }> {
  const snapshot = await db.selectFrom('scene_snapshots').select(['state', 'upto']).where('scene_id', '=', sceneId).where('doc', '=', doc).executeTakeFirst()
  const rows = await db
    .selectFrom('scene_updates')
    .select(['id', 'update'])
    .where('scene_id', '=', sceneId)
    .where('doc', '=', doc)
    .$if(snapshot !== undefined, (q) => q.where('id', '>', snapshot!.upto))
    .orderBy('id')
    .execute()
  return { snapshot: snapshot?.state ?? null, updates: rows.map((r) => r.update), lastId: rows.at(-1)?.id ?? snapshot?.upto ?? '0' }
}

/** Folds the updates up to `upto` into one snapshot and deletes them, in one transaction. */
export async function writeSnapshot(db: Conn, sceneId: string, doc: DocumentKind, state: Uint8Array, upto: string): Promise<void> {
  await db.transaction().execute(async (tx) => {
    await tx
      .insertInto('scene_snapshots')
      .values({ scene_id: sceneId, doc, state: Buffer.from(state), upto })
      .onConflict((oc) => oc.columns(['scene_id', 'doc']).doUpdateSet({ state: Buffer.from(state), upto, created_at: new Date() }))
      .execute()
    await tx.deleteFrom('scene_updates').where('scene_id', '=', sceneId).where('doc', '=', doc).where('id', '<=', upto).execute()
  })
}

export function countUpdates(db: Conn, sceneId: string, doc: DocumentKind) {
  return db.selectFrom('scene_updates').select((e) => e.fn.countAll<string>().as('n')).where('scene_id', '=', sceneId).where('doc', '=', doc).executeTakeFirstOrThrow()
}
