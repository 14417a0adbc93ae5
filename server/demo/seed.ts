import { countUsers, insertUser } from '../repositories/users'
import { insertMembership } from '../repositories/memberships'
import { insertProject } from '../repositories/projects'
import type { Services } from '../types'
import { DEMO_ACCOUNTS, DEMO_PASSWORD, DEMO_PROJECT } from './accounts'

/** Seeds the demo project and one account per role into an empty database. Returns whether it did. */
export async function seedDemo(s: Services): Promise<boolean> {
  if ((await countUsers(s.db)) > 0) return false
  const passwordHash = await s.hasher.hash(DEMO_PASSWORD)
  await s.db.transaction().execute(async (tx) => {
    const users = []
    for (const a of DEMO_ACCOUNTS) users.push({ ...a, row: await insertUser(tx, { email: a.email, name: a.name, password_hash: passwordHash }) })
    const owner = users.find((u) => u.role === 'owner')!
    const { id } = await insertProject(tx, { ...DEMO_PROJECT, createdBy: owner.row.id })
    for (const u of users) await insertMembership(tx, id, u.row.id, u.role)
  })
  s.log.info('seeded the demo project')
  return true
}
