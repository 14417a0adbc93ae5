import type { Conn } from '../db'

const summaries = (db: Conn) =>
  db
    .selectFrom('scenes as s')
    .select((eb) => [
      's.id',
      's.project_id',
      's.name',
      's.created_at',
      's.updated_at',
      eb.selectFrom('scene_instances as i').whereRef('i.scene_id', '=', 's.id').select((e) => e.fn.countAll<string>().as('n')).as('instance_count'),
    ])

export type SceneRow = NonNullable<Awaited<ReturnType<typeof findScene>>>

export function listScenes(db: Conn, projectId: string) {
  return summaries(db).where('s.project_id', '=', projectId).orderBy('s.created_at').orderBy('s.id').execute()
}

export function findScene(db: Conn, sceneId: string) {
  return summaries(db).where('s.id', '=', sceneId).executeTakeFirst()
}

export function insertScene(db: Conn, projectId: string, name: string, createdBy: string | null) {
  return db.insertInto('scenes').values({ project_id: projectId, name, created_by: createdBy }).returning('id').executeTakeFirstOrThrow()
}

export function renameScene(db: Conn, sceneId: string, name: string) {
  return db.updateTable('scenes').set({ name, updated_at: new Date() }).where('id', '=', sceneId).execute()
}

export function touchScene(db: Conn, sceneId: string) {
  return db.updateTable('scenes').set({ updated_at: new Date() }).where('id', '=', sceneId).execute()
}

export function deleteScene(db: Conn, sceneId: string) {
  return db.deleteFrom('scenes').where('id', '=', sceneId).execute()
}

export function projectOfScene(db: Conn, sceneId: string) {
  return db.selectFrom('scenes').select('project_id').where('id', '=', sceneId).executeTakeFirst()
}

const instanceRows = (db: Conn) =>
  db.selectFrom('scene_instances as i').innerJoin('scans as c', 'c.id', 'i.scan_id').selectAll('i').select('c.name as scan_name')

export type InstanceRow = NonNullable<Awaited<ReturnType<typeof findInstance>>>

export function listInstances(db: Conn, sceneId: string) {
  return instanceRows(db).where('i.scene_id', '=', sceneId).orderBy('i.created_at').orderBy('i.id').execute()
}

export function findInstance(db: Conn, instanceId: string) {
  return instanceRows(db).where('i.id', '=', instanceId).executeTakeFirst()
}

export function insertInstance(db: Conn, v: { sceneId: string; scanId: string; matrix: number[]; visible: boolean; color: string }) {
  return db.insertInto('scene_instances').values({ scene_id: v.sceneId, scan_id: v.scanId, matrix: v.matrix, visible: v.visible, color: v.color }).returning('id').executeTakeFirstOrThrow()
}

export function updateInstance(db: Conn, instanceId: string, v: { matrix?: number[]; visible?: boolean; color?: string }) {
  return db.updateTable('scene_instances').set({ ...v, updated_at: new Date() }).where('id', '=', instanceId).execute()
}

export function deleteInstance(db: Conn, instanceId: string) {
  return db.deleteFrom('scene_instances').where('id', '=', instanceId).execute()
}

export function projectOfInstance(db: Conn, instanceId: string) {
  return db.selectFrom('scene_instances as i').innerJoin('scenes as s', 's.id', 'i.scene_id').select('s.project_id').where('i.id', '=', instanceId).executeTakeFirst()
}
