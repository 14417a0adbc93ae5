import { sql } from 'kysely'
import type { Conn, Db } from '../db'
import type { DocumentKind } from '@shared/collab/documents'

/** The channel on which a stored update is announced to every process: `<sceneId> <doc> <seq>`. */
export const LIVE_CHANNEL = 'spanmark_live'

/**
 * Stores an update at the document's next position, in one statement (one round trip, its own transaction):
 * the document's counter row is taken and stays locked until commit, so positions follow commit order; the
 * announcement goes out with the commit (PostgreSQL delivers NOTIFY only then), so no process hears of an
 * update it cannot read yet.
 */
export async function insertUpdate(db: Conn, sceneId: string, doc: DocumentKind, update: Uint8Array, userId: string | null): Promise<{ seq: string }> {
  const { rows } = await sql<{ seq: string }>`
    with position as (
      insert into scene_documents (scene_id, doc, last_seq) values (${sceneId}, ${doc}, 1)
      on conflict (scene_id, doc) do update set last_seq = scene_documents.last_seq + 1
      returning last_seq
    ), stored as (
      insert into scene_updates (scene_id, doc, seq, update, user_id)
      select ${sceneId}, ${doc}, last_seq, ${Buffer.from(update)}, ${userId} from position
      returning seq
    )
    select seq::text as seq, pg_notify(${LIVE_CHANNEL}, ${`${sceneId} ${doc} `} || seq::text) from stored`.execute(db)
  return { seq: rows[0]!.seq }
}

/** The latest snapshot (if any) and every update after it, in position order. */
export async function loadDocumentLog(db: Conn, sceneId: string, doc: DocumentKind): Promise<{ snapshot: Buffer | null; updates: Buffer[]; lastSeq: string }> {
  const found = await updatesAfter(db, sceneId, doc, '0')
  return { snapshot: found.snapshot, updates: found.updates.map((u) => u.update), lastSeq: found.lastSeq }
}

/**
 * What a process that has applied every position up to `after` still needs: the updates after it, in order,
 * and the snapshot too when compaction has folded away some of those (Yjs applies a state it partly has
 * without harm, so the snapshot plus the later updates always bring it level). `lastSeq`: the last position
 * this answer brings the reader to.
 */
export async function updatesAfter(db: Conn, sceneId: string, doc: DocumentKind, after: string): Promise<{ snapshot: Buffer | null; updates: { seq: string; update: Buffer }[]; lastSeq: string }> {
  const snap = await db.selectFrom('scene_snapshots').select(['state', 'upto']).where('scene_id', '=', sceneId).where('doc', '=', doc).executeTakeFirst()
  const useSnapshot = snap !== undefined && BigInt(snap.upto) > BigInt(after)
  const from = useSnapshot ? snap.upto : after
  const rows = await db.selectFrom('scene_updates').select(['seq', 'update']).where('scene_id', '=', sceneId).where('doc', '=', doc).where('seq', '>', from).orderBy('seq').execute()
  const updates = rows.map((r) => ({ seq: String(r.seq), update: r.update }))
  return { snapshot: useSnapshot ? snap.state : null, updates, lastSeq: updates.at(-1)?.seq ?? from }
}

/**
 * Folds the updates up to position `upto` into one snapshot and deletes them, holding the document's lock
 * (its counter row) so no write of another process interleaves. `state` must hold every update up to `upto`
 * (the compacting process has applied them all). A process that had not yet read some of the deleted updates
 * reads the snapshot instead (`updatesAfter`).
 */
export async function writeSnapshot(db: Db, sceneId: string, doc: DocumentKind, state: Uint8Array, upto: string): Promise<void> {
  await db.transaction().execute(async (tx) => {
    await tx.selectFrom('scene_documents').select('last_seq').where('scene_id', '=', sceneId).where('doc', '=', doc).forUpdate().executeTakeFirst()
    const current = await tx.selectFrom('scene_snapshots').select('upto').where('scene_id', '=', sceneId).where('doc', '=', doc).executeTakeFirst()
    // Another process compacted further meanwhile: keep its snapshot.
    if (current && BigInt(current.upto) >= BigInt(upto)) return
    await tx
      .insertInto('scene_snapshots')
      .values({ scene_id: sceneId, doc, state: Buffer.from(state), upto })
      .onConflict((oc) => oc.columns(['scene_id', 'doc']).doUpdateSet({ state: Buffer.from(state), upto, created_at: new Date() }))
      .execute()
    await tx.deleteFrom('scene_updates').where('scene_id', '=', sceneId).where('doc', '=', doc).where('seq', '<=', upto).execute()
  })
}

export function countUpdates(db: Conn, sceneId: string, doc: DocumentKind) {
  return db.selectFrom('scene_updates').select((e) => e.fn.countAll<string>().as('n')).where('scene_id', '=', sceneId).where('doc', '=', doc).executeTakeFirstOrThrow()
}
