import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { countUsers, insertUser } from '../repositories/users'
import { insertMembership } from '../repositories/memberships'
import { insertProject } from '../repositories/projects'
import { acceptUpload } from '../services/scans'
import type { Services } from '../types'
import { DEMO_ACCOUNTS, DEMO_PASSWORD, DEMO_PROJECT } from './accounts'
import { demoScanFiles } from './synth/demoScans'

/**
 * Seeds the demo into an empty database: one account per role, the project, and its synthetic scans,
 * uploaded through the same path as a person's upload (object storage, then the ingest queue).
 * Returns whether it seeded.
 */
export async function seedDemo(s: Services): Promise<boolean> {
  if ((await countUsers(s.db)) > 0) return false
  const passwordHash = await s.hasher.hash(DEMO_PASSWORD)
  const { projectId, measurerId } = await s.db.transaction().execute(async (tx) => {
    const users = []
    for (const a of DEMO_ACCOUNTS) users.push({ ...a, row: await insertUser(tx, { email: a.email, name: a.name, password_hash: passwordHash }) })
    const owner = users.find((u) => u.role === 'owner')!
    const { id } = await insertProject(tx, { ...DEMO_PROJECT, createdBy: owner.row.id })
    for (const u of users) await insertMembership(tx, id, u.row.id, u.role)
    return { projectId: id, measurerId: users.find((u) => u.role === 'measurer')!.row.id }
  })
  const spool = path.join(s.config.dataDir, 'spool')
  fs.mkdirSync(spool, { recursive: true })
  for (const file of demoScanFiles()) {
    const tmp = path.join(spool, `demo-${crypto.randomBytes(6).toString('hex')}`)
    fs.writeFileSync(tmp, file.bytes)
    try {
      await acceptUpload(s, projectId, { path: tmp, size: file.bytes.length, originalname: file.fileName }, { name: file.name }, { userId: measurerId, rigKey: null })
    } finally {
      fs.rmSync(tmp, { force: true })
    }
  }
  s.log.info('seeded the demo project and queued its scans')
  return true
}
