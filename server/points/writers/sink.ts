/**
 * What the streaming writers (LAS, E57, PLY) share: they take points a batch at a time and hand bytes to a
 * sink in order, waiting for it (backpressure), so memory stays bounded by one batch and one output chunk.
 */
export interface ByteSink {
  write(chunk: Uint8Array): Promise<void>
}

/** Points in metres, x y z interleaved; colours 0-255 (r g b); intensity as stored with the scan. */
export interface ExportBatch {
  count: number
  positions: Float64Array
  colors?: Uint8Array | null
  intensities?: Float32Array | null
}

/** A problem with what is being exported (not a bug): its message is shown to the person who asked. */
export class ExportError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'ExportError'
  }
}

/** Collects writes into chunks of about `size` bytes before passing them on (fewer, larger sink writes). */
export class ChunkedSink implements ByteSink {
  private buffer: Uint8Array
  private used = 0
  constructor(
    private readonly target: ByteSink,
    size = 1 << 20,
  ) {
    this.buffer = Buffer.allocUnsafe(size)
  }

  async write(chunk: Uint8Array): Promise<void> {
    let at = 0
    while (at < chunk.length) {
      const take = Math.min(chunk.length - at, this.buffer.length - this.used)
      this.buffer.set(chunk.subarray(at, at + take), this.used)
      this.used += take
      at += take
      if (this.used === this.buffer.length) await this.flush()
    }
  }

  async flush(): Promise<void> {
    if (this.used === 0) return
    // Hand the filled buffer over and take a fresh one (no copy; allocUnsafe skips zero-filling, and every
    // byte of it is written before it is passed on).
    const out = this.buffer.subarray(0, this.used)
    this.buffer = Buffer.allocUnsafe(this.buffer.length)
    this.used = 0
    await this.target.write(out)
  }
}

/** A sink that keeps everything in memory (tests, small files). */
export class MemorySink implements ByteSink {
  private parts: Uint8Array[] = []
  async write(chunk: Uint8Array): Promise<void> {
    this.parts.push(chunk.slice())
  }
  bytes(): Uint8Array {
    return Buffer.concat(this.parts)
  }
}
