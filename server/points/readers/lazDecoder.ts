import { readFileSync } from 'node:fs'
import { createRequire } from 'node:module'
import { dirname, join } from 'node:path'
import { pathToFileURL } from 'node:url'
import { parse } from '@loaders.gl/core'
import { LAZRsLoader } from '@loaders.gl/las'

/**
 * LAZ decompression through @loaders.gl/las 4.4.5, on the whole file in memory (no hand-written LAZ
 * decoder), always through LAZRsLoader (laz-rs, LAS 1.0-1.4, point formats 0-10). Its wasm module would
 * fetch its .wasm by URL: in Node it is initialised by hand from the package's own file first (the
 * loader's own init call then finds it ready).
 * Not LASLoader (laz-perf) even for 1.2 files: laz-perf's emscripten glue installs process-wide
 * 'uncaughtException' and 'unhandledRejection' (abort) handlers the first time it runs, which a server
 * process must not inherit.
 * Options: fp64 (doubles, else float32 loses ~0.1 m at large coordinates) and colorDepth 16 (else
 * 16-bit colour is cut to its low byte).
 */

export interface DecodedLaz {
  count: number
  positions: Float64Array
  /** RGBA, 4 per point, 8-bit (16-bit values divided by 256). */
  colors: Uint8Array | null
  intensities: Uint16Array | null
}

interface LoadedMesh {
  header?: { vertexCount?: number }
  attributes: Record<string, { value: ArrayLike<number> & { length: number }; size: number } | undefined>
}

let lazRsReady: Promise<void> | null = null

export function initLazRsWasm(): Promise<void> {
  lazRsReady ??= (async () => {
    const require = createRequire(import.meta.url)
    const dist = dirname(require.resolve('@loaders.gl/las'))
    const folder = join(dist, 'libs', 'laz-rs-wasm')
    const glue = (await import(pathToFileURL(join(folder, 'laz_rs_wasm.js')).href)) as {
      initSync: (input: { module: BufferSource }) => unknown
    }
    glue.initSync({ module: readFileSync(join(folder, 'laz_rs_wasm_bg.wasm')) })
  })()
  return lazRsReady
}

export async function decodeLaz(file: ArrayBuffer): Promise<DecodedLaz> {
  const options = { worker: false, las: { fp64: true, colorDepth: 16, skip: 1 } }
  await initLazRsWasm()
  const mesh = (await parse(file, LAZRsLoader, options)) as unknown as LoadedMesh
  const position = mesh.attributes.POSITION
  if (!position || !(position.value instanceof Float64Array)) {
    throw new Error('the decoder returned no double-precision positions')
  }
  const color = mesh.attributes.COLOR_0
  const intensity = mesh.attributes.intensity
  return {
    count: position.value.length / 3,
    positions: position.value,
    colors: color && color.value instanceof Uint8Array ? color.value : null,
    intensities: intensity && intensity.value instanceof Uint16Array ? intensity.value : null,
  }
}
