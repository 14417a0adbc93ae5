// Scans in through the API with the real ingest worker process, object storage fake and PostgreSQL.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { readAll } from '../../server/points/readers'
import { sampleE57 } from '../unit/points/lib/e57Samples'
import { writeE57 } from '../unit/points/lib/e57Writer'
import { writeCompressedPcd } from '../unit/points/lib/pcdCompressed'
import { waitForScan, upload } from '../utils/scans'
import { sendParts, xyzFile } from '../utils/uploads'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'

const FIXTURES = path.resolve('tests/fixtures')
let t: TestServer
let owner: Awaited<ReturnType<typeof signUpAgent>>
let projectId: string

beforeAll(async () => {
  t = await startTestServer({}, { WORKER: 'spawn' })
  owner = await signUpAgent(t, 'Scan Owner')
  projectId = (await owner.agent.post('/api/projects').send({ name: 'Scans' }).expect(201)).body.project.id
})
afterAll(async () => {
  await t?.stop()
})

describe('uploads', () => {
  // The resumable path (tests/api/uploads.test.ts has its cases): parts straight to storage, then the same processing.
  it('takes a resumable upload in parts to a ready scan', async () => {
    const file = xyzFile(12_000) // 288,000 bytes: 5 parts of the test config's 64 KiB
    const created = (await owner.agent.post(`/api/projects/${projectId}/uploads`).send({ fileName: 'long wall.xyz', sizeBytes: file.length }).expect(201)).body.upload
    expect(created.partCount).toBe(5)
    await sendParts(owner.agent, created, file, [1, 2, 3, 4, 5])
    await owner.agent.post(`/api/uploads/${created.id}/complete`).expect(202)
    const { scan } = await waitForScan(owner.agent, created.scanId)
    expect(scan.status, scan.error ?? '').toBe('ready')
    expect(scan).toMatchObject({ format: 'xyz', pointCount: 12_000, sizeBytes: file.length })
    expect(scan.bounds).toEqual({ min: [0, 0.5, 0.25], max: [11.999, 0.5, 0.25] })
  })

  it('takes a file, answers 202 queued, and processes it to ready with its stats', async () => {
    const res = await upload(owner.agent, projectId, Buffer.from('# x y z\n0 0 0\n1 0 0\n0 1 0\n1 1 0.5\n'), 'four.xyz').expect(202)
    expect(res.body.scan).toMatchObject({ status: 'queued', fileName: 'four.xyz', name: 'four', sizeBytes: 34 })
    const { scan } = await waitForScan(owner.agent, res.body.scan.id)
    expect(scan).toMatchObject({ status: 'ready', format: 'xyz', pointCount: 4, progress: 1, error: null })
    expect(scan.bounds).toEqual({ min: [0, 0, 0], max: [1, 1, 0.5] })
    const list = await owner.agent.get(`/api/projects/${projectId}/scans`).expect(200)
    expect(list.body.scans.map((s: { id: string }) => s.id)).toContain(scan.id)
  })

  // tests/fixtures: crate.las and crate.laz hold the same 5220 points on a 2 cm grid with
  // +-1 mm noise, bounds (-0.4010, -0.2510, -0.0010)..(0.4010, 0.2510, 0.6010).
  for (const name of ['crate.las', 'crate.laz']) {
    it(`reads ${name}: 5220 points, the fixture's bounds, spacing 0.020 m within 5 %`, async () => {
      const res = await upload(owner.agent, projectId, fs.readFileSync(path.join(FIXTURES, name)), name).expect(202)
      const { scan } = await waitForScan(owner.agent, res.body.scan.id)
      expect(scan.status, scan.error ?? '').toBe('ready')
      expect(scan.pointCount).toBe(5220)
      expect(scan.bounds!.min.map((v) => +v.toFixed(4))).toEqual([-0.401, -0.251, -0.001])
      expect(scan.bounds!.max.map((v) => +v.toFixed(4))).toEqual([0.401, 0.251, 0.601])
      expect(Math.abs(scan.spacing! - 0.02) / 0.02).toBeLessThan(0.05)
      // +-1 mm uniform noise has a standard deviation of 1/sqrt(3) mm (GUM 4.3.7); the plane-fit estimate
      // should be of that order.
      expect(scan.pointUncertainty!).toBeGreaterThan(0.0002)
      expect(scan.pointUncertainty!).toBeLessThan(0.002)
      expect(scan.uncertaintySource).toBe('estimated')
    })
  }

  // E57 files written from ASTM E2807's tables (tests/unit/points/lib/e57Writer.ts); the expected points
  // are computed from the standard's definitions (tests/unit/points/lib/e57Samples.ts).
  it('reads a one-scan E57 through ranged reads of the stored original: every valid point, at its pose', async () => {
    const { spec, expected, dropped } = sampleE57({ a: 600, b: 0, c: 0 })
    spec.scans = spec.scans.slice(0, 1)
    const res = await upload(owner.agent, projectId, writeE57(spec).bytes, 'north bay.e57').expect(202)
    const { scan } = await waitForScan(owner.agent, res.body.scan.id)
    expect(scan.status, scan.error ?? '').toBe('ready')
    expect(scan.format).toBe('e57')
    expect(scan.pointCount).toBe(expected.length)
    expect(scan.dropped).toEqual(dropped)
    expect(scan.attributes).toMatchObject({ color: true, intensity: true })
    for (let axis = 0; axis < 3; axis++) {
      expect(scan.bounds!.min[axis]).toBeCloseTo(Math.min(...expected.map((e) => e.world[axis]!)), 9)
      expect(scan.bounds!.max[axis]).toBeCloseTo(Math.max(...expected.map((e) => e.world[axis]!)), 9)
    }
  })

  // PCD binary_compressed as PCL lays it out (tests/unit/points/lib/pcdCompressed.ts): an organised 40 x 30
  // cloud whose every seventh pixel is NaN (no return); expected figures from the inputs in float32.
  it('reads an organised binary_compressed PCD with capital X Y Z: the returns kept, the NaN pixels counted', async () => {
    const xs: number[] = []
    const ys: number[] = []
    const zs: number[] = []
    const kept: number[][] = []
    for (let i = 0; i < 1200; i++) {
      const p = i % 7 === 2 ? [NaN, NaN, NaN] : [(i % 40) * 0.01, 0 - Math.floor(i / 40) * 0.02, 1.25 + (i % 13) * 0.001]
      xs.push(p[0]!), ys.push(p[1]!), zs.push(p[2]!)
      if (!Number.isNaN(p[0]!)) kept.push(p.map(Math.fround))
    }
    const bytes = writeCompressedPcd({
      width: 40,
      height: 30,
      columns: [
        { name: 'X', type: 'F', size: 4, values: xs },
        { name: 'Y', type: 'F', size: 4, values: ys },
        { name: 'Z', type: 'F', size: 4, values: zs },
      ],
    })
    const res = await upload(owner.agent, projectId, bytes, 'shelf frame.pcd').expect(202)
    const { scan } = await waitForScan(owner.agent, res.body.scan.id)
    expect(scan.status, scan.error ?? '').toBe('ready')
    expect(scan.format).toBe('pcd')
    expect(scan.pointCount).toBe(kept.length)
    expect(scan.dropped).toEqual({ notANumber: 1200 - kept.length })
    expect(scan.bounds).toEqual({
      min: [0, 1, 2].map((a) => Math.min(...kept.map((p) => p[a]!))),
      max: [0, 1, 2].map((a) => Math.max(...kept.map((p) => p[a]!))),
    })
  })

  it('makes a scan per station of a three-scan E57 and, in one step, a scene with each placed at its pose', async () => {
    const { spec, expected } = sampleE57({ a: 600, b: 120, c: 80 })
    const res = await upload(owner.agent, projectId, writeE57(spec).bytes, 'three stations.e57').expect(202)
    const first = (await waitForScan(owner.agent, res.body.scan.id)).scan
    expect(first.status, first.error ?? '').toBe('ready')
    // Station 0 is the upload's own scan; the others follow with names from the file.
    const deadline = Date.now() + 30_000
    let scene: { id: string; name: string; instanceCount: number } | undefined
    while (!scene && Date.now() < deadline) {
      const list = (await owner.agent.get(`/api/projects/${projectId}/scenes`).expect(200)).body.scenes as { id: string; name: string; instanceCount: number }[]
      scene = list.find((s) => s.name === 'three stations')
      if (!scene) await new Promise((r) => setTimeout(r, 100))
    }
    expect(scene, 'a scene named after the upload').toBeDefined()
    const names = ['three stations', 'three stations, stair core', 'three stations, station 3']
    const instances = (await owner.agent.get(`/api/scenes/${scene!.id}`).expect(200)).body.scene.instances as { scanId: string; scanName: string; matrix: number[] }[]
    const placed = [...instances].sort((a, b) => names.indexOf(a.scanName) - names.indexOf(b.scanName))
    expect(placed.map((p) => p.scanName)).toEqual(names)
    expect(placed[0]!.scanId).toBe(first.id)
    // Poses from the file: a quarter turn about +z then (100, 200, 5); a half turn about +x then (-1, 2, 3);
    // none. Column-major rigid 4x4s, derived by hand from the quaternions.
    const want = [
      [0, 1, 0, 0, -1, 0, 0, 0, 0, 0, 1, 0, 100, 200, 5, 1],
      [1, 0, 0, 0, 0, -1, 0, 0, 0, 0, -1, 0, -1, 2, 3, 1],
      [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1],
    ]
    placed.forEach((p, i) => p.matrix.forEach((v, k) => expect(v, `placement ${i} matrix[${k}]`).toBeCloseTo(want[i]![k]!, 12)))
    // Each station holds its own valid points, in its own frame.
    for (const [i, p] of placed.entries()) {
      const { scan } = await waitForScan(owner.agent, p.scanId)
      expect(scan.status).toBe('ready')
      const own = expected.filter((e) => e.scan === i)
      expect(scan.pointCount, `station ${i}`).toBe(own.length)
      for (let axis = 0; axis < 3; axis++) {
        expect(scan.bounds!.min[axis]).toBeCloseTo(Math.min(...own.map((e) => e.local[axis]!)), 9)
        expect(scan.bounds!.max[axis]).toBeCloseTo(Math.max(...own.map((e) => e.local[axis]!)), 9)
      }
    }
    // The stations share the stored original: deleting one keeps it for the others.
    await owner.agent.delete(`/api/scans/${placed[2]!.scanId}`).expect(204)
    const original = await owner.agent.get(`/api/scans/${first.id}/original`).expect(200)
    expect(original.body.length ?? Number(original.headers['content-length'])).toBeGreaterThan(0)
  })

  it('reports intermediate progress while a larger file is processed', async () => {
    const lines: string[] = []
    for (let i = 0; i < 600_000; i++) lines.push(`${(i % 1000) * 0.01} ${Math.floor(i / 1000) * 0.01} ${Math.sin(i) * 0.001}`)
    const res = await upload(owner.agent, projectId, Buffer.from(lines.join('\n')), 'plane.xyz').expect(202)
    const { scan, seen } = await waitForScan(owner.agent, res.body.scan.id, undefined, 60_000, 20)
    expect(scan.status, scan.error ?? '').toBe('ready')
    expect(scan.pointCount).toBe(600_000)
    const between = seen.filter((s) => s.status === 'processing' && s.progress > 0 && s.progress < 1)
    expect(between.length, 'progress values seen between 0 and 1').toBeGreaterThan(0)
    const values = seen.map((s) => s.progress)
    expect(values).toEqual([...values].sort((a, b) => a - b))
  })

  it('keeps the original in object storage, byte for byte', async () => {
    const bytes = fs.readFileSync(path.join(FIXTURES, 'crate.las'))
    const res = await upload(owner.agent, projectId, bytes, 'crate-copy.las').expect(202)
    const got = await owner.agent.get(`/api/scans/${res.body.scan.id}/original`).buffer(true).parse((r, cb) => {
      const parts: Buffer[] = []
      r.on('data', (c: Buffer) => parts.push(c))
      r.on('end', () => cb(null, Buffer.concat(parts)))
    }).expect(200)
    expect(Buffer.compare(got.body as Buffer, bytes)).toBe(0)
    expect(got.headers['content-disposition']).toContain('crate-copy.las')
  })

  it('refuses a request without a file with a 400 naming the field', async () => {
    const res = await owner.agent.post(`/api/projects/${projectId}/scans`).field('name', 'nothing').expect(400)
    expect(res.body.error).toMatchObject({ code: 'invalid-input', field: 'file' })
  })

  it('refuses a second file and an unknown declared format', async () => {
    const two = await owner.agent.post(`/api/projects/${projectId}/scans`).attach('file', Buffer.from('0 0 0\n'), 'a.xyz').attach('other', Buffer.from('0 0 0\n'), 'b.xyz').expect(400)
    expect(two.body.error.message).toMatch(/one file, in the multipart field 'file'/)
    const fmt = await upload(owner.agent, projectId, Buffer.from('0 0 0\n'), 'a.xyz', { format: 'e58' }).expect(400)
    expect(fmt.body.error.field).toBe('format')
  })

  it('renames a scan, takes an entered uncertainty, and deletes it with its tiles and original', async () => {
    const res = await upload(owner.agent, projectId, fs.readFileSync(path.join(FIXTURES, 'crate.las')), 'crate.las').expect(202)
    const id = res.body.scan.id as string
    await waitForScan(owner.agent, id)
    const renamed = await owner.agent.patch(`/api/scans/${id}`).send({ name: 'Crate, north face', enteredUncertainty: 0.0015 }).expect(200)
    expect(renamed.body.scan).toMatchObject({ name: 'Crate, north face', pointUncertainty: 0.0015, uncertaintySource: 'entered' })
    const back = await owner.agent.patch(`/api/scans/${id}`).send({ enteredUncertainty: null }).expect(200)
    expect(back.body.scan.uncertaintySource).toBe('estimated')
    const bad = await owner.agent.patch(`/api/scans/${id}`).send({ enteredUncertainty: -1 }).expect(400)
    expect(bad.body.error.field).toBe('enteredUncertainty')
    await owner.agent.delete(`/api/scans/${id}`).expect(204)
    await owner.agent.get(`/api/scans/${id}`).expect(404)
    const tiles = await t.server.services.db.selectFrom('scan_tiles').select('node_key').where('scan_id', '=', id).execute()
    expect(tiles).toEqual([])
  })
})

describe('rig keys', () => {
  it('lets a rig post a file with a bearer token and no session, and stops when revoked', async () => {
    const created = await owner.agent.post(`/api/projects/${projectId}/upload-tokens`).send({ label: 'tripod head 2' }).expect(201)
    const secret = created.body.secret as string
    expect(secret.startsWith('smk_')).toBe(true)
    expect(created.body.token.hint).not.toContain(secret.slice(8, -4))
    const stored = await t.server.services.db.selectFrom('upload_tokens').select('token_hash').executeTakeFirstOrThrow()
    expect(stored.token_hash).not.toContain(secret)
    // As `curl -H "Authorization: Bearer ..." -F file=@station.xyz` would send it: no cookie, no Origin.
    const supertest = (await import('supertest')).default
    const res = await supertest(t.url).post(`/api/projects/${projectId}/scans`).set('Authorization', `Bearer ${secret}`).attach('file', Buffer.from('0 0 0\n1 1 1\n'), 'rig.xyz').expect(202)
    expect(res.body.scan.uploadedBy).toBe('rig key "tripod head 2"')
    const list = await owner.agent.get(`/api/projects/${projectId}/upload-tokens`).expect(200)
    expect(list.body.tokens[0].lastUsedAt).not.toBeNull()
    await owner.agent.delete(`/api/upload-tokens/${created.body.token.id}`).expect(204)
    const after = await supertest(t.url).post(`/api/projects/${projectId}/scans`).set('Authorization', `Bearer ${secret}`).attach('file', Buffer.from('0 0 0\n'), 'rig.xyz').expect(401)
    expect(after.body.error.message).toMatch(/revoked/)
  })
})

describe('bad input', () => {
  const corpus = JSON.parse(fs.readFileSync(path.join(FIXTURES, 'bad', 'expected.json'), 'utf8')) as { file: string; fragment: string }[]
  it(`fails each of the ${corpus.length} bad files with its message, and nothing else`, async () => {
    const good = await upload(owner.agent, projectId, Buffer.from('0 0 0\n1 0 0\n'), 'good.xyz').expect(202)
    const ids = []
    for (const c of corpus) ids.push({ ...c, id: (await upload(owner.agent, projectId, fs.readFileSync(path.join(FIXTURES, 'bad', c.file)), c.file).expect(202)).body.scan.id as string })
    for (const c of ids) {
      const { scan } = await waitForScan(owner.agent, c.id)
      expect(scan.status, c.file).toBe('failed')
      expect(scan.error, c.file).toContain(c.fragment)
    }
    expect((await waitForScan(owner.agent, good.body.scan.id)).scan.status).toBe('ready')
    await owner.agent.get('/api/health').expect(200)
  })
})

describe('tiles and nearest points', () => {
  let scanId: string
  let points: Float64Array
  beforeAll(async () => {
    const bytes = fs.readFileSync(path.join(FIXTURES, 'crate.las'))
    points = (await readAll(bytes, 'las')).positions
    scanId = (await upload(owner.agent, projectId, bytes, 'crate.las').expect(202)).body.scan.id
    await waitForScan(owner.agent, scanId)
  })

  it('serves the hierarchy and every tile with an ETag, answering 304 to a repeat', async () => {
    const h = await owner.agent.get(`/api/scans/${scanId}/hierarchy`).expect(200)
    expect(h.body.nodes[0].key).toBe('r')
    expect(h.body.nodes.reduce((a: number, n: { pointCount: number }) => a + n.pointCount, 0)).toBe(5220)
    const tile = await owner.agent.get(`/api/scans/${scanId}/tiles/r`).expect(200)
    expect(tile.headers['content-type']).toContain('application/octet-stream')
    const etag = tile.headers.etag as string
    expect(etag).toBeTruthy()
    await owner.agent.get(`/api/scans/${scanId}/tiles/r`).set('If-None-Match', etag).expect(304)
    const bad = await owner.agent.get(`/api/scans/${scanId}/tiles/x9`).expect(400)
    expect(bad.body.error.field).toBe('nodeKey')
  })

  // Common practice, no source: the index must agree with a brute-force search over the same points.
  it('finds the same nearest points as brute force over the file', async () => {
    let seed = 7
    const rand = () => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31)
    for (let q = 0; q < 200; q++) {
      const x = rand() - 0.5, y = rand() * 0.6 - 0.3, z = rand() * 0.7 - 0.05
      const res = await owner.agent.get(`/api/scans/${scanId}/nearest`).query({ x, y, z, k: 3 }).expect(200)
      const brute: number[] = []
      for (let i = 0; i < points.length; i += 3) brute.push(Math.hypot(points[i]! - x, points[i + 1]! - y, points[i + 2]! - z))
      brute.sort((a, b) => a - b)
      // Stored positions are float32 offsets within a node: equal to the file's within a few micrometres.
      res.body.points.forEach((p: { distance: number }, i: number) => expect(Math.abs(p.distance - brute[i]!)).toBeLessThan(5e-6))
    }
  })

  it('names a bad query parameter', async () => {
    const res = await owner.agent.get(`/api/scans/${scanId}/nearest`).query({ x: 'a', y: 0, z: 0 }).expect(400)
    expect(res.body.error.field).toBe('x')
    const k = await owner.agent.get(`/api/scans/${scanId}/nearest`).query({ x: 0, y: 0, z: 0, k: 0 }).expect(400)
    expect(k.body.error.field).toBe('k')
  })
})
