/**
 * Random access to a file's bytes, for formats that cannot be read front to back (E57 keeps its XML at
 * the end). `read` returns exactly `length` bytes, or fewer only where the file ends. Implementations:
 * `memorySource` here (tests, small files), `fileSource` and `objectSource` in `server/points/sources.ts`
 * (a local file, the object store's ranged GET).
 */
export interface ByteSource {
  /** The file's size in bytes. */
  readonly size: number
  /** The bytes may be overwritten by the next read of the same source: copy what you keep. */
  read(offset: number, length: number): Promise<Uint8Array>
}

export function memorySource(bytes: Uint8Array): ByteSource {
  return {
    size: bytes.length,
    read: async (offset, length) => bytes.subarray(Math.min(offset, bytes.length), Math.min(bytes.length, offset + length)),
  }
}
