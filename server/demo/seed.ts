import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { countUsers, insertUser } from '../repositories/users'
import { insertMembership } from '../repositories/memberships'
import { insertProject, updateProject } from '../repositories/projects'
import { insertInstance, insertScene } from '../repositories/scenes'
import { findMarker, insertMarker } from '../repositories/markers'
import { insertRevision } from '../repositories/markerRevisions'
import { invertRigid, rotationZ, transformPoint } from '@shared/geometry/rigidTransform'
import { CHEST, CHEST_AT, DOOR, TROLLEY } from './synth/scene'
import { createObject, createObjectTrim } from '../services/objects'
import type { Actor } from '../services/markerWrites'
import { acceptUpload } from '../services/scans'
import { PLACEMENT_COLOURS } from '../services/scenes'
import type { Services } from '../types'
import { createPass } from '../services/passes'
import { DEMO_ACCOUNTS, DEMO_GUEST, DEMO_PASSWORD, DEMO_PROJECT } from './accounts'
import { DEMO_SCENE, STATION_B, demoScanFiles } from './synth/demoScans'

/**
 * Seeds the demo into an empty database: one account per member role, the project, and its synthetic scans,
 * uploaded through the same path as a person's upload (object storage, then the ingest queue). The guest's
 * viewing pass follows once the server listens (`seedDemoGuest`), since its e-mailed link needs the address.
 * Returns whether it seeded.
 */
export async function seedDemo(s: Services): Promise<boolean> {
  if ((await countUsers(s.db)) > 0) return false
  const passwordHash = await s.hasher.hash(DEMO_PASSWORD)
  const { projectId, measurerId } = await s.db.transaction().execute(async (tx) => {
    const users = []
    for (const a of DEMO_ACCOUNTS) users.push({ ...a, row: await insertUser(tx, { email: a.email, name: a.name, password_hash: passwordHash, email_confirmed_at: new Date() }) })
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
  // ready scans). Every station stands where it stood but B, only roughly placed, to be aligned; the chest
  // waits on its trolley in the yard to the right of the door.
  const { id: sceneId } = await insertScene(s.db, projectId, DEMO_SCENE.name, measurerId)
  const instanceIds: Record<string, string> = {}
  for (const [i, p] of DEMO_SCENE.placements.entries()) {
    instanceIds[p.fileName] = (await insertInstance(s.db, { sceneId, scanId: scanIds[p.fileName]!, matrix: p.matrix, visible: true, color: PLACEMENT_COLOURS[i]! })).id
  }
  const objectId = await seedDemoObject(s, sceneId, instanceIds, { userId: measurerId, role: 'measurer' })
  await seedDemoMarkers(s, projectId, sceneId, instanceIds, objectId, measurerId)
  s.log.info('seeded the demo project, its scene, and queued its scans')
  return true
}

/**
 * The demo guest's viewing pass, sent by the owner through the outbox, so its e-mail (and its one-time link)
 * waits in the dev mailbox. Called once, right after a seeding start has its public address.
 */
export async function seedDemoGuest(s: Services): Promise<void> {
  const owner = DEMO_ACCOUNTS.find((a) => a.role === 'owner')!
  const project = await s.db
    .selectFrom('projects as p')
    .innerJoin('users as u', 'u.id', 'p.created_by')
    .select(['p.id', 'u.id as owner_id'])
    .where('u.email', '=', owner.email)
    .where('p.name', '=', DEMO_PROJECT.name)
    .executeTakeFirst()
  if (!project) return
  await createPass(s, project.id, project.owner_id, DEMO_GUEST)
}

/** The placements that see the chest: its front and back stations, and door station A. */
export const CHEST_MEMBERS = ['chart-chest-front.ply', 'chart-chest-back.ply', 'west-door-station-A.ply'] as const
export const CHEST_OBJECT = 'chart chest on its trolley'
/** The floor cut's height above the yard floor: above its points' noise, under the chest's (the castors' lowest few centimetres go with the floor). */
export const FLOOR_CUT = 0.03

/**
 * The chest on its trolley as an object, through the objects service as a person's edit: the placements that
 * see it, each with a keep box round chest and trolley (8 cm clear all round) and a cut just above the yard
 * floor, so the trolley belongs to the object and the floor does not; stray points dropped (k 8, n 2) for the
 * mixed pixels at its edges. Station A also holds the door and the wall: its keep box takes the chest out of it.
 */
async function seedDemoObject(s: Services, sceneId: string, instanceIds: Record<string, string>, actor: Actor): Promise<string> {
  const members = CHEST_MEMBERS.map((f) => instanceIds[f]!)
  const object = await createObject(s, sceneId, { name: CHEST_OBJECT, members, stray: { k: 8, n: 2 } }, actor)
  const [x, y, z] = CHEST_AT
  const height = TROLLEY.height + CHEST.height
  const clear = 0.08
  for (const instanceId of members) {
    await createObjectTrim(s, object.id, { instanceId, mode: 'keep', label: 'chest and trolley', shape: { shape: 'box', centre: [x, y, z + height / 2], size: [CHEST.length + 2 * clear, CHEST.depth + 2 * clear, height + 2 * clear] } }, actor)
    await createObjectTrim(s, object.id, { instanceId, mode: 'cut', label: 'yard floor', shape: { shape: 'below', point: [x, y, z + FLOOR_CUT] } }, actor)
  }
  return object.id
}

/**
 * The demo's first markers, on station A (placed where it stood): the door's head height, a section through
 * the wall with its free opening, and the chest's clearance through it kept upright and free to turn (the
 * riggers of the story ask for 80 mm a side); and the door's width from station A to station B, which reads
 * right only once B is aligned. The clearances and the size marker read the chest on its trolley as an object. Written as
 * rows and checked once the scans are processed.
 */
async function seedDemoMarkers(s: Services, projectId: string, sceneId: string, instanceIds: Record<string, string>, objectId: string, userId: string): Promise<void> {
  await updateProject(s.db, projectId, { requiredMargin: 0.08 })
  const a = instanceIds['west-door-station-A.ply']!
  const matrixA = DEMO_SCENE.placements.find((p) => p.fileName === 'west-door-station-A.ply')!.matrix
  const local = (x: number, y: number, z: number) => {
    const [lx, ly, lz] = transformPoint(invertRigid(matrixA), x, y, z)
    return { instanceId: a, x: lx, y: ly, z: lz }
  }
  const { halfWidth, height, wallThickness } = DOOR
  const markers: { id: string; revision: number }[] = []
  const add = async (v: Omit<Parameters<typeof insertMarker>[1], 'sceneId' | 'userId'>) => {
    const row = await insertMarker(s.db, { ...v, sceneId, userId })
    // Its first version in the history, as the marker service records one.
    await insertRevision(s.db, (await findMarker(s.db, row.id))!, 'created', userId)
    markers.push(row)
    return row.id
  }
  await add({ kind: 'distance', label: 'door head height', anchors: [local(0.3, wallThickness / 2, 0), local(0.3, wallThickness / 2, height)], params: {} })
  // Two points on the yard face either side of the door: a vertical plane along the wall, 0.4 m thick so it
  // holds the face, the reveal and the threshold.
  const section = await add({
    kind: 'section',
    label: 'west door, free opening',
    anchors: [local(-halfWidth - 0.3, 0, 1.0), local(halfWidth + 0.3, 0, 1.0)],
    params: { plane: 'two-points', thickness: 0.4, opening: true },
  })
  await add({ kind: 'clearance', label: 'chest upright through the door', anchors: [], params: { objectId, sectionMarkerId: section, maxTurnDegrees: 0 } })
  await add({ kind: 'clearance', label: 'chest, any turn', anchors: [], params: { objectId, sectionMarkerId: section } })
  // The chest's size on its trolley: the oriented box of the object's kept points, its height from the yard floor.
  await add({ kind: 'size', label: 'chest on its trolley, size', anchors: [], params: { objectId } })
  // The clear width across the two stations: A's right jamb to B's left jamb (each sees only the far one, at
  // 1 m, mid-reveal). B's anchor is on B's own points, so while B is only roughly placed the width reads
  // wrong; aligning B puts it right, with both registrations in its uncertainty.
  const b = instanceIds['west-door-station-B.log']!
  const [bx, by, bz] = transformPoint(invertRigid(rotationZ(STATION_B.headingDeg, ...STATION_B.position)), -halfWidth, wallThickness / 2, 1.0)
  await add({ kind: 'distance', label: 'door width across the stations', anchors: [local(halfWidth, wallThickness / 2, 1.0), { instanceId: b, x: bx, y: by, z: bz }], params: {} })
  s.markerChecks.schedule(markers)
}
