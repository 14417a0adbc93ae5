import type { Conn } from '../db'
import type { NewUser } from '../db/schema'

export function findUserByEmail(db: Conn, email: string) {
  return db.selectFrom('users').selectAll().where('email', '=', email).executeTakeFirst()
}

export function findUserById(db: Conn, id: string) {
  return db.selectFrom('users').selectAll().where('id', '=', id).executeTakeFirst()
}

export function insertUser(db: Conn, user: NewUser) {
  return db.insertInto('users').values(user).returningAll().executeTakeFirstOrThrow()
}

export function updateUserName(db: Conn, id: string, name: string) {
  return db.updateTable('users').set({ name, updated_at: new Date() }).where('id', '=', id).returningAll().executeTakeFirstOrThrow()
}

export function updatePasswordHash(db: Conn, id: string, passwordHash: string) {
  return db.updateTable('users').set({ password_hash: passwordHash, updated_at: new Date() }).where('id', '=', id).execute()
}

export async function countUsers(db: Conn): Promise<number> {
  const r = await db.selectFrom('users').select((eb) => eb.fn.countAll<string>().as('n')).executeTakeFirstOrThrow()
  return Number(r.n)
}
