import type { Conn } from '../db'

const projectWithRole = (db: Conn) =>
  db
    .selectFrom('projects as p')
    .innerJoin('memberships as m', 'm.project_id', 'p.id')
    .select((eb) => [
      'p.id',
      'p.name',
      'p.description',
      'p.anchor_tolerance',
      'p.required_margin',
      'p.daily_upload_bytes',
      'p.max_scan_points',
      'p.created_at',
      'p.updated_at',
      'm.role',
      eb.selectFrom('memberships as c').whereRef('c.project_id', '=', 'p.id').select((e) => e.fn.countAll<string>().as('n')).as('member_count'),
    ])

export type ProjectWithRoleRow = NonNullable<Awaited<ReturnType<typeof findProjectForUser>>>

export function listProjectsForUser(db: Conn, userId: string) {
  return projectWithRole(db).where('m.user_id', '=', userId).orderBy('p.updated_at', 'desc').orderBy('p.id').execute()
}

export function findProjectForUser(db: Conn, projectId: string, userId: string) {
  return projectWithRole(db).where('p.id', '=', projectId).where('m.user_id', '=', userId).executeTakeFirst()
}

/** A project with its member count, without anyone's role (a guest's view is decided by its pass). */
export function findProjectWithCount(db: Conn, projectId: string) {
  return db
    .selectFrom('projects as p')
    .select((eb) => [
      'p.id',
      'p.name',
      'p.description',
      'p.anchor_tolerance',
      'p.required_margin',
      'p.daily_upload_bytes',
      'p.max_scan_points',
      'p.created_at',
      'p.updated_at',
      eb.selectFrom('memberships as c').whereRef('c.project_id', '=', 'p.id').select((e) => e.fn.countAll<string>().as('n')).as('member_count'),
    ])
    .where('p.id', '=', projectId)
    .executeTakeFirst()
}

export function insertProject(db: Conn, values: { name: string; description: string; createdBy: string }) {
  return db
    .insertInto('projects')
    .values({ name: values.name, description: values.description, created_by: values.createdBy })
    .returning('id')
    .executeTakeFirstOrThrow()
}

export function updateProject(
  db: Conn,
  projectId: string,
  values: { name?: string; description?: string; anchorTolerance?: number | null; requiredMargin?: number; dailyUploadBytes?: number; maxScanPoints?: number },
) {
  const { anchorTolerance, requiredMargin, dailyUploadBytes, maxScanPoints, ...rest } = values
  return db
    .updateTable('projects')
    .set({
      ...rest,
      ...(anchorTolerance !== undefined ? { anchor_tolerance: anchorTolerance } : {}),
      ...(requiredMargin !== undefined ? { required_margin: requiredMargin } : {}),
      ...(dailyUploadBytes !== undefined ? { daily_upload_bytes: dailyUploadBytes } : {}),
      ...(maxScanPoints !== undefined ? { max_scan_points: maxScanPoints } : {}),
      updated_at: new Date(),
    })
    .where('id', '=', projectId)
    .execute()
}

export function deleteProject(db: Conn, projectId: string) {
  return db.deleteFrom('projects').where('id', '=', projectId).execute()
}

/** Row lock that serialises membership changes of one project (the last-owner rule). */
export function lockProject(db: Conn, projectId: string) {
  return db.selectFrom('projects').select('id').where('id', '=', projectId).forUpdate().executeTakeFirst()
}

/** The marker settings of a project (tolerance null: the default rule). */
export function findMarkerSettings(db: Conn, projectId: string) {
  return db.selectFrom('projects').select(['anchor_tolerance', 'required_margin']).where('id', '=', projectId).executeTakeFirst()
}
