import fs from 'node:fs'
import type { AddressInfo } from 'node:net'
import S3rver from 's3rver'

/** The local stand-in for hosted object storage: s3rver on loopback, files under `directory`. */
export interface FakeS3 {
  endpoint: string
  close(): Promise<void>
}

/**
 * The bucket's CORS rules (the S3 PutBucketCors XML): the page PUTs upload parts straight to storage
 * through presigned URLs and must read each answer's ETag. Any origin: the fake listens on loopback only
 * and a PUT needs a URL the server signed. A hosted bucket names the app's origin instead (README).
 */
const BROWSER_PARTS_CORS = `<CORSConfiguration>
  <CORSRule>
    <AllowedOrigin>*</AllowedOrigin>
    <AllowedMethod>PUT</AllowedMethod>
    <AllowedMethod>GET</AllowedMethod>
    <AllowedHeader>*</AllowedHeader>
    <ExposeHeader>ETag</ExposeHeader>
    <MaxAgeSeconds>3600</MaxAgeSeconds>
  </CORSRule>
</CORSConfiguration>`

export async function startFakeS3(opts: { port: number; directory: string; bucket: string }): Promise<FakeS3> {
  fs.mkdirSync(opts.directory, { recursive: true })
  const server = new S3rver({ address: '127.0.0.1', port: opts.port, silent: true, directory: opts.directory, configureBuckets: [{ name: opts.bucket, configs: [Buffer.from(BROWSER_PARTS_CORS)] }] })
  const address = (await server.run()) as AddressInfo
  return { endpoint: `http://127.0.0.1:${address.port}`, close: () => server.close() }
}
