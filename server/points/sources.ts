import fs from 'node:fs/promises'
import type { ObjectStore } from '../storage/objects'
import type { ByteSource } from './readers/byteSource'

/**
 * Ranged byte sources for readers that need random access (E57): a stored original in object storage
 * (ranged GETs) or a local file. Each read fetches only what it asks for.
 */

export function objectSource(objects: ObjectStore, key: string, size: number): ByteSource {
  return { size, read: (offset, length) => objects.getRange(key, offset, Math.max(0, Math.min(length, size - offset))) }
}

/** A local file; close() when done. */
export async function fileSource(path: string): Promise<ByteSource & { close(): Promise<void> }> {
  const handle = await fs.open(path, 'r')
  const { size } = await handle.stat()
  // One buffer for every read (a read's bytes are valid until the next, as ByteSource says).
  let scratch = Buffer.alloc(0)
  return {
    size,
    async read(offset, length) {
      const n = Math.max(0, Math.min(length, size - offset))
      if (scratch.length < n) scratch = Buffer.alloc(n)
      const buffer = scratch.subarray(0, n)
      let done = 0
      while (done < n) {
        const { bytesRead } = await handle.read(buffer, done, n - done, offset + done)
        if (bytesRead === 0) break
        done += bytesRead
      }
      return buffer.subarray(0, done)
    },
    close: () => handle.close(),
  }
}
