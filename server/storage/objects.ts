import type { Readable } from 'node:stream'
import { CreateBucketCommand, DeleteObjectCommand, GetObjectCommand, HeadBucketCommand, S3Client } from '@aws-sdk/client-s3'
import { Upload } from '@aws-sdk/lib-storage'

export interface ObjectStoreConfig {
  endpoint: string | null
  region: string
  bucket: string
  accessKeyId: string
  secretAccessKey: string
}

/** Original upload files, kept in S3-compatible object storage (a local fake in development and tests). */
export class ObjectStore {
  readonly client: S3Client
  constructor(readonly config: ObjectStoreConfig) {
    // The SDK warns that its releases from 2027 on need Node 22; Spanmark pins a release that runs on 20.
    process.env.AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED ??= 'true'
    this.client = new S3Client({
      region: config.region,
      ...(config.endpoint ? { endpoint: config.endpoint, forcePathStyle: true } : {}),
      credentials: { accessKeyId: config.accessKeyId, secretAccessKey: config.secretAccessKey },
      // Since SDK 3.729 streamed uploads get checksum trailers (aws-chunked framing) by default, and a
      // fake server may keep that framing inside the object; ask for checksums only where required.
      requestChecksumCalculation: 'WHEN_REQUIRED',
      responseChecksumValidation: 'WHEN_REQUIRED',
    })
  }

  async ensureBucket(): Promise<void> {
    try {
      await this.client.send(new HeadBucketCommand({ Bucket: this.config.bucket }))
    } catch {
      await this.client.send(new CreateBucketCommand({ Bucket: this.config.bucket }))
    }
  }

  /** Multipart upload of a stream of any length. */
  async put(key: string, body: Readable, contentType = 'application/octet-stream'): Promise<void> {
    const upload = new Upload({
      client: this.client,
      params: { Bucket: this.config.bucket, Key: key, Body: body, ContentType: contentType },
      partSize: 8 * 1024 * 1024,
      queueSize: 4,
    })
    await upload.done()
  }

  async get(key: string): Promise<Readable> {
    const res = await this.client.send(new GetObjectCommand({ Bucket: this.config.bucket, Key: key }))
    if (!res.Body) throw new Error(`object ${key} has no body`)
    return res.Body as Readable
  }

  async delete(key: string): Promise<void> {
    await this.client.send(new DeleteObjectCommand({ Bucket: this.config.bucket, Key: key }))
  }

  destroy(): void {
    this.client.destroy()
  }
}
