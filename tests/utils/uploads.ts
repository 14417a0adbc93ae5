import type supertest from 'supertest'
import { expect } from 'vitest'
import type { TestServer } from './server'

type Caller = ReturnType<TestServer['agent']> | ReturnType<typeof supertest.agent>

/** An XYZ file of `n` points on a line (x = i mm), each line padded to 24 bytes: n * 24 bytes. */
export function xyzFile(n: number): Buffer {
  const lines: string[] = []
  for (let i = 0; i < n; i++) lines.push(`${(i / 1000).toFixed(3)} 0.5 0.25`.padEnd(23, ' ') + '\n')
  return Buffer.from(lines.join(''))
}

/**
 * What the browser's uploader does for the parts given: asks for their URLs, PUTs each part's bytes
 * straight to storage, and confirms the ETag storage answered. `bytesOf` may send other bytes than the file's.
 */
export async function sendParts(
  agent: Caller,
  upload: { id: string; partSize: number },
  file: Buffer,
  parts: number[],
  bytesOf = (n: number) => file.subarray((n - 1) * upload.partSize, n * upload.partSize),
) {
  const { urls } = (await agent.post(`/api/uploads/${upload.id}/part-urls`).send({ parts }).expect(200)).body as { urls: { partNumber: number; url: string }[] }
  expect(urls.map((u) => u.partNumber)).toEqual(parts)
  for (const { partNumber, url } of urls) {
    const put = await fetch(url, { method: 'PUT', body: new Uint8Array(bytesOf(partNumber)) })
    expect(put.status, await put.clone().text()).toBe(200)
    const etag = put.headers.get('etag')
    expect(etag).toBeTruthy()
    const expected = file.subarray((partNumber - 1) * upload.partSize, partNumber * upload.partSize).length
    await agent.put(`/api/uploads/${upload.id}/parts/${partNumber}`).send({ etag, sizeBytes: expected }).expect(200)
  }
}
