import fs from 'node:fs'
import type { AddressInfo } from 'node:net'
import S3rver from 's3rver'

/** The local stand-in for hosted object storage: s3rver on loopback, files under `directory`. */
export interface FakeS3 {
  endpoint: string
  close(): Promise<void>
}

export async function startFakeS3(opts: { port: number; directory: string; bucket: string }): Promise<FakeS3> {
  fs.mkdirSync(opts.directory, { recursive: true })
  const server = new S3rver({ address: '127.0.0.1', port: opts.port, silent: true, directory: opts.directory, configureBuckets: [{ name: opts.bucket, configs: [] }] })
  const address = (await server.run()) as AddressInfo
  return { endpoint: `http://127.0.0.1:${address.port}`, close: () => server.close() }
}
