import { sql } from 'kysely'
import type { Conn } from '../db'
import type { MembershipsTable } from '../db/schema'

type Role = MembershipsTable['role']

export function findMembership(db: Conn, projectId: string, userId: string) {
  return db.selectFrom('memberships').select(['role']).where('project_id', '=', projectId).where('user_id', '=', userId).executeTakeFirst()
}

const memberRows = (db: Conn) =>
  db.selectFrom('memberships as m').innerJoin('users as u', 'u.id', 'm.user_id').select(['m.user_id', 'u.name', 'u.email', 'm.role', 'm.created_at'])

export type MemberRow = Awaited<ReturnType<ReturnType<typeof memberRows>['executeTakeFirstOrThrow']>>

/** Owners first, then measurers, mentors and guests; by name within a role. */
const roleRank = sql<number>`case m.role when 'owner' then 0 when 'measurer' then 1 when 'mentor' then 2 else 3 end`

export function listMembers(db: Conn, projectId: string) {
  return memberRows(db).where('m.project_id', '=', projectId).orderBy(roleRank).orderBy('u.name').orderBy('m.user_id').execute()
}

export function findMember(db: Conn, projectId: string, userId: string) {
  return memberRows(db).where('m.project_id', '=', projectId).where('m.user_id', '=', userId).executeTakeFirst()
}

export function insertMembership(db: Conn, projectId: string, userId: string, role: Role) {
  return db.insertInto('memberships').values({ project_id: projectId, user_id: userId, role }).onConflict((oc) => oc.doNothing()).returning('user_id').executeTakeFirst()
}

export function updateMembershipRole(db: Conn, projectId: string, userId: string, role: Role) {
  return db.updateTable('memberships').set({ role }).where('project_id', '=', projectId).where('user_id', '=', userId).returning('user_id').executeTakeFirst()
}

export function deleteMembership(db: Conn, projectId: string, userId: string) {
  return db.deleteFrom('memberships').where('project_id', '=', projectId).where('user_id', '=', userId).returning('user_id').executeTakeFirst()
}

export async function countOwners(db: Conn, projectId: string): Promise<number> {
  const r = await db
    .selectFrom('memberships')
    .where('project_id', '=', projectId)
    .where('role', '=', 'owner')
    .select((eb) => eb.fn.countAll<string>().as('n'))
    .executeTakeFirstOrThrow()
  return Number(r.n)
}
