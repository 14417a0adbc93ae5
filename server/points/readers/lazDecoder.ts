import { readFileSync } from 'node:fs'
import { createRequire } from 'node:module'
import { dirname, join } from 'node:path'
import { pathToFileURL } from 'node:url'

/**
 * LAZ decompression through laz-rs (the wasm build @loaders.gl/las 4.4.5 ships, LAS 1.0-1.4, point formats
 * 0-10, fixed and variable chunk sizes), called directly: `new WasmLasZipDecompressor(file)` takes the whole
 * compressed file, then each `decompress_many(out)` fills `out` with the next out.length / record length
 * points as raw LAS records. We ask for a batch at a time, so the decoded points are never all in memory,
 * and free the decompressor once, at the end. (loaders.gl's own loader asks for one point a call and
 * frees in a `finally`: after a trap inside laz-rs the object is left borrowed, and that free then throws
 * "attempted to take ownership of Rust value while it was borrowed", hiding the real error.)
 * Its wasm module would fetch its .wasm by URL: in Node it is initialised by hand from the package's file.
 * Not laz-perf: its emscripten glue installs process-wide 'uncaughtException' and 'unhandledRejection'
 * (abort) handlers the first time it runs, which a server process must not inherit.
 */

interface WasmDecompressor {
  decompress_many(out: Uint8Array): void
  free(): void
}

interface LazRsGlue {
  initSync: (input: { module: BufferSource }) => unknown
  WasmLasZipDecompressor: new (file: Uint8Array) => WasmDecompressor
}

let glueReady: Promise<LazRsGlue> | null = null

function loadGlue(): Promise<LazRsGlue> {
  glueReady ??= (async () => {
    const require = createRequire(import.meta.url)
    const dist = dirname(require.resolve('@loaders.gl/las'))
    const folder = join(dist, 'libs', 'laz-rs-wasm')
    const glue = (await import(pathToFileURL(join(folder, 'laz_rs_wasm.js')).href)) as LazRsGlue
    glue.initSync({ module: readFileSync(join(folder, 'laz_rs_wasm_bg.wasm')) })
    return glue
  })()
  return glueReady
}

/** Loads the wasm module once (tests call it before loaders.gl's LAZRsLoader, which then finds it ready). */
export async function initLazRsWasm(): Promise<void> {
  await loadGlue()
}

/** Decompresses a LAZ file record by record, `count` at a time. */
export class LazRecords {
  private decompressor: WasmDecompressor | null

  private constructor(decompressor: WasmDecompressor) {
    this.decompressor = decompressor
  }

  /** The decoder copies `file` into its own memory: the caller may drop its copy afterwards. */
  static async open(file: Uint8Array): Promise<LazRecords> {
    const glue = await loadGlue()
    return new LazRecords(withPanicText(() => new glue.WasmLasZipDecompressor(file)))
  }

  /** Fills `out` (a whole number of records) with the next records. */
  next(out: Uint8Array): void {
    const decompressor = this.decompressor
    if (!decompressor) throw new Error('the LAZ decoder is closed')
    try {
      withPanicText(() => decompressor.decompress_many(out))
    } catch (error) {
      // A trap leaves the object borrowed for good: drop it without free() (which would throw).
      this.decompressor = null
      throw error
    }
  }

  close(): void {
    const decompressor = this.decompressor
    this.decompressor = null
    decompressor?.free()
  }
}

/**
 * laz-rs reports a panic through console.error (its panic hook) and then traps with a bare "unreachable":
 * while it runs, console.error is collected, and a trap is rethrown with the panic's own message (the
 * file path of the panic's source line left out). The call is synchronous, so nothing else logs meanwhile.
 */
export function withPanicText<T>(call: () => T): T {
  const said: string[] = []
  const original = console.error
  console.error = (...args: unknown[]) => {
    said.push(args.map(String).join(' '))
  }
  try {
    return call()
  } catch (error) {
    const text = said.join('\n').trim()
    if (text === '') throw error
    const lines = text.split('\n').map((l) => l.trim()).filter((l) => l !== '' && !/^panicked at /.test(l))
    throw new Error(lines.join(' ') || text, { cause: error })
  } finally {
    console.error = original
  }
}
