import { afterAll, beforeAll, expect, it } from 'vitest'
import { upload } from '../utils/scans'
import { signUpAgent, startTestServer, type TestServer } from '../utils/server'

let t: TestServer
beforeAll(async () => {
  t = await startTestServer({}, { UPLOAD_LIMIT_BYTES: '1000' })
})
afterAll(async () => {
  await t?.stop()
})

it('answers an upload over the limit with 413 and a message giving the limit, and stores nothing', async () => {
  const owner = await signUpAgent(t)
  const projectId = (await owner.agent.post('/api/projects').send({ name: 'Limit' }).expect(201)).body.project.id
  const res = await upload(owner.agent, projectId, Buffer.alloc(5000, 48), 'big.xyz').expect(413)
  expect(res.body.error.code).toBe('payload-too-large')
  expect(res.body.error.message).toMatch(/1000 bytes/)
  const scans = await owner.agent.get(`/api/projects/${projectId}/scans`).expect(200)
  expect(scans.body.scans).toEqual([])
})
