// s3rver ships no types; this covers what Spanmark uses.
declare module 's3rver' {
  import type { AddressInfo } from 'node:net'
  interface S3rverOptions {
    address?: string
    port?: number
    silent?: boolean
    directory?: string
    resetOnClose?: boolean
    configureBuckets?: { name: string; configs: (string | Buffer)[] }[]
  }
  export default class S3rver {
    constructor(options: S3rverOptions)
    run(): Promise<AddressInfo>
    close(): Promise<void>
  }
}
