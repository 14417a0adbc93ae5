import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { countUsers, insertUser } from '../repositories/users'
import { insertMembership } from '../repositories/memberships'
import { insertProject } from '../repositories/projects'
import { insertInstance, insertScene } from '../repositories/scenes'
import { acceptUpload } from '../services/scans'
import { PLACEMENT_COLOURS } from '../services/scenes'
import type { Services } from '../types'
import { DEMO_ACCOUNTS, DEMO_PASSWORD, DEMO_PROJECT } from './accounts'
import { DEMO_SCENE } from './synth/demoScans'
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
  const scanIds: Record<string, string> = {}
  for (const file of demoScanFiles()) {
    const tmp = path.join(spool, `demo-${crypto.randomBytes(6).toString('hex')}`)
    fs.writeFileSync(tmp, file.bytes)
    try {
      const scan = await acceptUpload(s, projectId, { path: tmp, size: file.bytes.length, originalname: file.fileName }, { name: file.name }, { userId: measurerId, rigKey: null })
      scanIds[file.fileName] = scan.id
    } finally {
      fs.rmSync(tmp, { force: true })
    }
  }
  // The scans are still being processed; their placements are written directly (the API places only
  // ready scans). Station A stands where it stood; B only roughly, to be aligned; the chest waits in the
  // yard in front of the door.
  const { id: sceneId } = await insertScene(s.db, projectId, DEMO_SCENE.name, measurerId)
  for (const [i, p] of DEMO_SCENE.placements.entries()) {
    await insertInstance(s.db, { sceneId, scanId: scanIds[p.fileName]!, matrix: p.matrix, visible: true, color: PLACEMENT_COLOURS[i]! })
  }
  s.log.info('seeded the demo project, its scene, and queued its scans')
  return true
}
