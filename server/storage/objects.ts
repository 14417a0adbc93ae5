import type { Readable } from 'node:stream'
import {
  AbortMultipartUploadCommand,
  CompleteMultipartUploadCommand,
  CreateBucketCommand,
  CreateMultipartUploadCommand,
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  HeadObjectCommand,
  S3Client,
  UploadPartCommand,
} from '@aws-sdk/client-s3'
import { Upload } from '@aws-sdk/lib-storage'
import { getSignedUrl } from '@aws-sdk/s3-request-presigner'

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
  /** The origin the browser PUTs parts to (set by `resolvePartOrigin`); the page's CSP allows it. */
  partOrigin: string | null = null
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

  /**
   * Bytes [start, start + length) of an object through a ranged GET (RFC 9110 section 14: `Range:
   * bytes=first-last`, both inclusive). Fewer bytes come back only where the object ends; a start at or past
   * the end gives none.
   */
  async getRange(key: string, start: number, length: number): Promise<Buffer> {
    if (!Number.isSafeInteger(start) || start < 0 || !Number.isSafeInteger(length) || length < 0) throw new RangeError(`bad range ${start}+${length}`)
    if (length === 0) return Buffer.alloc(0)
    let res
    try {
      res = await this.client.send(new GetObjectCommand({ Bucket: this.config.bucket, Key: key, Range: `bytes=${start}-${start + length - 1}` }))
    } catch (err) {
      // 416: the range starts at or past the object's end.
      if ((err as { $metadata?: { httpStatusCode?: number } }).$metadata?.httpStatusCode === 416) return Buffer.alloc(0)
      throw err
    }
    if (!res.Body) throw new Error(`object ${key} has no body`)
    // A server that ignores Range answers 200 with the whole object: refuse it rather than read it all.
    if (res.ContentRange === undefined) {
      ;(res.Body as Readable).destroy()
      throw new Error(`object storage ignored the Range header for ${key} (no Content-Range in its answer)`)
    }
    const parts: Buffer[] = []
    for await (const part of res.Body as Readable) parts.push(part as Buffer)
    const bytes = Buffer.concat(parts)
    return bytes.length > length ? bytes.subarray(0, length) : bytes
  }

  /** Starts an S3 multipart upload (CreateMultipartUpload); returns its upload id. */
  async createMultipart(key: string, contentType = 'application/octet-stream'): Promise<string> {
    const res = await this.client.send(new CreateMultipartUploadCommand({ Bucket: this.config.bucket, Key: key, ContentType: contentType }))
    if (!res.UploadId) throw new Error(`object storage gave no upload id for ${key}`)
    return res.UploadId
  }

  /**
   * A presigned URL (SigV4 query authentication) for one UploadPart PUT, valid `expiresIn` seconds: the
   * client sends the part's bytes straight to object storage and reads the ETag header of the answer.
   */
  partUrl(key: string, uploadId: string, partNumber: number, expiresIn: number): Promise<string> {
    return getSignedUrl(this.client, new UploadPartCommand({ Bucket: this.config.bucket, Key: key, UploadId: uploadId, PartNumber: partNumber }), { expiresIn })
  }

  /** Finds the origin of presigned URLs (signing needs no request) so the page may connect to it. */
  async resolvePartOrigin(): Promise<string> {
    const url = await getSignedUrl(this.client, new GetObjectCommand({ Bucket: this.config.bucket, Key: 'origin-probe' }), { expiresIn: 60 })
    this.partOrigin = new URL(url).origin
    return this.partOrigin
  }

  /** CompleteMultipartUpload with the parts in order (number and ETag as storage answered each PUT). */
  async completeMultipart(key: string, uploadId: string, parts: { partNumber: number; etag: string }[]): Promise<void> {
    await this.client.send(
      new CompleteMultipartUploadCommand({
        Bucket: this.config.bucket,
        Key: key,
        UploadId: uploadId,
        MultipartUpload: { Parts: parts.map((p) => ({ PartNumber: p.partNumber, ETag: p.etag })) },
      }),
    )
  }

  async abortMultipart(key: string, uploadId: string): Promise<void> {
    await this.client.send(new AbortMultipartUploadCommand({ Bucket: this.config.bucket, Key: key, UploadId: uploadId }))
  }

  /** The stored object's size in bytes (HeadObject's Content-Length). */
  async size(key: string): Promise<number> {
    const res = await this.client.send(new HeadObjectCommand({ Bucket: this.config.bucket, Key: key }))
    return Number(res.ContentLength ?? 0)
  }

  async delete(key: string): Promise<void> {
    await this.client.send(new DeleteObjectCommand({ Bucket: this.config.bucket, Key: key }))
  }

  destroy(): void {
    this.client.destroy()
  }
}
