import type { Conn } from '../db'

export function insertCheckpoint(db: Conn, values: { sceneId: string; name: string; markers: unknown[]; userId: string | null }) {
  return db
    .insertInto('scene_checkpoints')
    .values({ scene_id: values.sceneId, name: values.name, markers: JSON.stringify(values.markers), marker_count: values.markers.length, created_by: values.userId })
    .onConflict((oc) => oc.constraint('scene_checkpoints_name').doNothing())
    .returning('id')
    .executeTakeFirst()
}

const withPeople = (db: Conn) =>
  db
    .selectFrom('scene_checkpoints as c')
    .leftJoin('users as u', 'u.id', 'c.created_by')
    .select(['c.id', 'c.scene_id', 'c.name', 'c.marker_count', 'c.created_by', 'c.created_at', 'u.name as created_by_name'])

export function listCheckpoints(db: Conn, sceneId: string) {
  return withPeople(db).where('c.scene_id', '=', sceneId).orderBy('c.created_at', 'desc').execute()
}

export function findCheckpoint(db: Conn, id: string) {
  return withPeople(db).select('c.markers').where('c.id', '=', id).executeTakeFirst()
}

export function deleteCheckpoint(db: Conn, id: string) {
  return db.deleteFrom('scene_checkpoints').where('id', '=', id).executeTakeFirst()
}

export function projectOfCheckpoint(db: Conn, id: string) {
  return db.selectFrom('scene_checkpoints as c').innerJoin('scenes as s', 's.id', 'c.scene_id').select('s.project_id').where('c.id', '=', id).executeTakeFirst()
}
