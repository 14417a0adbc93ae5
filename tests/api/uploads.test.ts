// Resumable uploads straight to object storage (S3 multipart with presigned part URLs) against the real
// server, PostgreSQL and the s3rver fake (no ingest worker: tests/api/scans.test.ts takes one such upload
// to a ready scan). Parts are 64 KiB here (the test config's `uploads.resumable.minPartBytes`; 16 MiB elsewhere).
import supertest from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { sweepIdleUploads } from '../../server/services/uploads'
import { sendParts, xyzFile } from '../utils/uploads'
import { guestAgent, signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let projectId: string
const PART = 64 * 1024

const range = (from: number, to: number) => Array.from({ length: to - from + 1 }, (_, i) => from + i)

beforeAll(async () => {
  t = await startTestServer()
  owner = await signUpAgent(t, 'Upload Owner')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Big files' }).expect(201)).body.project.id
})
afterAll(async () => {
  await t?.stop()
})

describe('resumable uploads', () => {
  it('takes a file in parts straight to storage; complete queues it as a scan', async () => {
    const file = xyzFile(12_000) // 288,000 bytes: 5 parts, the last 25,856 bytes
    const created = await owner.agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'long wall.xyz', sizeBytes: file.length, lastModified: 1_700_000_000_000 }).expect(201)
    const upload = created.body.upload
    expect(created.body.resumed).toBe(false)
    expect(upload).toMatchObject({ partSize: PART, partCount: 5, partsHeld: [], status: 'receiving', sizeBytes: file.length })
    await sendParts(owner.agent, upload, file, range(1, 5))
    const done = await owner.agent.post(`/api/uploads/${upload.id}/complete`).expect(202)
    expect(done.body.scan).toMatchObject({ id: upload.scanId, status: 'queued', fileName: 'long wall.xyz', name: 'long wall', sizeBytes: file.length })
    // The stored original is the file, byte for byte.
    const row = await t.server.services.db.selectFrom('scans').select('blob_key').where('id', '=', upload.scanId).executeTakeFirstOrThrow()
    expect(Buffer.compare(await t.server.services.objects.getRange(row.blob_key, 0, file.length + 10), file)).toBe(0)
    expect(await statusOf(upload.id)).toBe('complete')
    const again = await owner.agent.post(`/api/uploads/${upload.id}/complete`).expect(409)
    expect(again.body.error.message).toContain('already complete')
  })

  it('resumes after a dropped session: the same file again finds the upload and only the missing parts are sent', async () => {
    const file = xyzFile(14_000) // 336,000 bytes: 6 parts
    const declare = { fileName: 'stair core.xyz', sizeBytes: file.length, lastModified: 1_700_000_123_000 }
    const first = (await owner.agent.post(`/api/projects/${projectId}/uploads`).send(declare).expect(201)).body.upload
    await sendParts(owner.agent, first, file, [1, 2, 4])
    // The page is reloaded: a new session picks the same file (same name, size and last-modified).
    const later = await signInAgain()
    const resumed = await later.post(`/api/projects/${projectId}/uploads`).send(declare).expect(200)
    expect(resumed.body.resumed).toBe(true)
    expect(resumed.body.upload).toMatchObject({ id: first.id, partsHeld: [1, 2, 4] })
    const missing = range(1, resumed.body.upload.partCount).filter((n) => !resumed.body.upload.partsHeld.includes(n))
    expect(missing).toEqual([3, 5, 6])
    const early = await later.post(`/api/uploads/${first.id}/complete`).expect(409)
    expect(early.body.error.message).toBe("3 of this upload's 6 parts are not stored yet (parts 3, 5, 6): send them, then complete again.")
    await sendParts(later, resumed.body.upload, file, missing)
    const parts = await t.server.services.db.selectFrom('upload_parts').select(['part_number', 'created_at']).where('upload_id', '=', first.id).orderBy('part_number').execute()
    expect(parts.map((p) => p.part_number)).toEqual([1, 2, 3, 4, 5, 6])
    await later.post(`/api/uploads/${first.id}/complete`).expect(202)
    // The parts of the first session were kept and used: the stored original is the whole file.
    const row = await t.server.services.db.selectFrom('scans').select('blob_key').where('id', '=', first.scanId).executeTakeFirstOrThrow()
    expect(Buffer.compare(await t.server.services.objects.getRange(row.blob_key, 0, file.length + 10), file)).toBe(0)
    // A file of another last-modified time is another file: a new upload.
    const other = await later.post(`/api/projects/${projectId}/uploads`).send({ ...declare, lastModified: 1_700_000_999_000 }).expect(201)
    expect(other.body.upload.id).not.toBe(first.id)
  })

  it('refuses at create a declared size over the per-file limit or the quota, with what and how much', async () => {
    const huge = await owner.agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'too big.e57', sizeBytes: 101 * 1024 ** 3 }).expect(413)
    expect(huge.body.error.message).toBe('This file (101 GiB, 108447924224 bytes) is larger than the upload limit of 100 GiB (107374182400 bytes).')
    const p = (await owner.agent.post('/api/projects').send({ name: 'Small quota' }).expect(201)).body.project.id
    await owner.agent.patch(`/api/projects/${p}`).send({ dailyUploadBytes: 1024 ** 2 }).expect(200)
    const over = await owner.agent.post(`/api/projects/${p}/uploads`).send({ fileName: 'a.xyz', sizeBytes: 2 * 1024 ** 2 }).expect(429)
    expect(over.body.error.message).toMatch(/^This project's upload quota is 1 MiB a day \(any 24 hours\); it has received 0 bytes, so 1 MiB is left and this file \(2 MiB\) does not fit/)
    // Uploads under way count as received: two files of 700 KiB do not both fit into 1 MiB.
    await owner.agent.post(`/api/projects/${p}/uploads`).send({ fileName: 'b.xyz', sizeBytes: 700 * 1024 }).expect(201)
    const second = await owner.agent.post(`/api/projects/${p}/uploads`).send({ fileName: 'c.xyz', sizeBytes: 700 * 1024 }).expect(429)
    expect(second.body.error.message).toContain('it has received 700 KiB')
    const bad = await owner.agent.post(`/api/projects/${p}/uploads`).send({ fileName: '', sizeBytes: 0 }).expect(400)
    expect(bad.body.error.message).toMatch(/body\.fileName: must not be empty|body\.sizeBytes: must be at least 1 byte/)
  })

  it('refuses a part of the wrong size, and a completed total that differs from the declared size', async () => {
    const file = xyzFile(6_000) // 144,000 bytes: 3 parts
    const upload = (await owner.agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'short.xyz', sizeBytes: file.length }).expect(201)).body.upload
    const wrong = await owner.agent.put(`/api/uploads/${upload.id}/parts/1`).send({ etag: '"x"', sizeBytes: 1000 }).expect(400)
    expect(wrong.body.error.message).toBe(`body.sizeBytes: part 1 of this upload holds ${PART} bytes (parts of ${PART} bytes, the last one the rest), not 1000.`)
    const past = await owner.agent.post(`/api/uploads/${upload.id}/part-urls`).send({ parts: [4] }).expect(400)
    expect(past.body.error.message).toBe('body.parts[0]: part 4 is past the last part of this upload (3).')
    // The last part's PUT carries 100 bytes fewer than its confirmation claims: storage holds less than declared.
    await sendParts(owner.agent, upload, file, [1, 2, 3], (n) => (n === 3 ? file.subarray(2 * PART, file.length - 100) : file.subarray((n - 1) * PART, n * PART)))
    const res = await owner.agent.post(`/api/uploads/${upload.id}/complete`).expect(400)
    expect(res.body.error.message).toBe(`Object storage holds ${file.length - 100} bytes (140.53 KiB) for this upload, but it declared ${file.length} bytes (140.63 KiB): the file was not kept. Send it again as a new upload.`)
    await owner.agent.get(`/api/scans/${upload.scanId}`).expect(404)
    expect(await statusOf(upload.id)).toBe('abandoned')
  })

  it("refuses another project's upload: to a non-member, and to a rig key of another project", async () => {
    const file = xyzFile(3_000)
    const upload = (await owner.agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'mine.xyz', sizeBytes: file.length }).expect(201)).body.upload
    const stranger = await signUpAgent(t, 'Other Team')
    const theirs = (await stranger.agent.post('/api/projects').send({ name: 'Theirs' }).expect(201)).body.project.id
    const key = (await stranger.agent.post(`/api/projects/${theirs}/upload-tokens`).send({ label: 'their rig' }).expect(201)).body.secret
    for (const agent of [stranger.agent, supertest.agent(t.url).set('Authorization', `Bearer ${key}`)]) {
      await agent.put(`/api/uploads/${upload.id}/parts/1`).send({ etag: '"x"', sizeBytes: file.length }).expect(404)
      await agent.post(`/api/uploads/${upload.id}/part-urls`).send({ parts: [1] }).expect(404)
      await agent.post(`/api/uploads/${upload.id}/complete`).expect(404)
      await agent.delete(`/api/uploads/${upload.id}`).expect(404)
    }
    expect(await t.server.services.db.selectFrom('upload_parts').select('part_number').where('upload_id', '=', upload.id).execute()).toEqual([])
    // The rig key of this project uses the same API with its token.
    const own = (await owner.agent.post(`/api/projects/${projectId}/upload-tokens`).send({ label: 'tripod' }).expect(201)).body.secret
    const rig = supertest.agent(t.url).set('Authorization', `Bearer ${own}`)
    const rigUpload = (await rig.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'rig station.xyz', sizeBytes: file.length }).expect(201)).body.upload
    await sendParts(rig, rigUpload, file, [1, 2])
    const scan = (await rig.post(`/api/uploads/${rigUpload.id}/complete`).expect(202)).body.scan
    expect(scan).toMatchObject({ fileName: 'rig station.xyz', sizeBytes: file.length })
  })

  it('a guest cannot upload', async () => {
    const { agent } = await guestAgent(t, owner.agent, projectId)
    const res = await agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'guest.xyz', sizeBytes: 1000 }).expect(403)
    expect(res.body.error.code).toBe('forbidden')
  })

  it('abandons uploads left idle past the configured time', async () => {
    const upload = (await owner.agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'left.xyz', sizeBytes: 1000 }).expect(201)).body.upload
    expect(await sweepIdleUploads(t.server.services, Date.now() - 60_000)).toBe(0)
    expect(await sweepIdleUploads(t.server.services, Date.now() + t.config.uploads.resumable.idleMs + 1000)).toBeGreaterThanOrEqual(1)
    const res = await owner.agent.post(`/api/uploads/${upload.id}/part-urls`).send({ parts: [1] }).expect(409)
    expect(res.body.error.message).toBe('This upload is abandoned and takes no more parts.')
  })
})

async function statusOf(uploadId: string): Promise<string> {
  return (await t.server.services.db.selectFrom('uploads').select('status').where('id', '=', uploadId).executeTakeFirstOrThrow()).status
}

/** A second signed-in session of the owner (the page after a reload, or another laptop). */
async function signInAgain() {
  const agent = t.agent()
  await agent.post('/api/auth/sign-in').send({ email: owner.email, password: owner.password }).expect(200)
  return agent
}
