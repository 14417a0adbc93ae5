/**
 * The tile format: the points one octree node stores, as sent to the browser and kept in scan_tiles.data.
 * Pure code over typed arrays (no Node imports): the browser decodes tiles with this same file.
 *
 * Layout, all little-endian; byte offsets from the start of the tile:
 *
 *   0   4 bytes   magic 'SMT1' (ASCII)
 *   4   uint16    version (1)
 *   6   uint16    flags: bit 0 colours, bit 1 intensities, bit 2 uncertainties (other bits must be 0)
 *   8   uint32    count: number of points
 *   12  uint32    reserved, 0 (keeps the origin 8-byte aligned)
 *   16  float64   origin x, y, z (metres, the scan's frame; the node's box centre)
 *   40  float32   positions: count x 3 (x y z interleaved), offsets from the origin in metres
 *   ..  float32   intensities: count            (if flag bit 1)
 *   ..  float32   uncertainties: count, metres  (if flag bit 2; per-point standard uncertainty)
 *   ..  uint8     colours: count x 3 (r g b, 0-255)  (if flag bit 0)
 *
 * Total 40 + 12 n [+ 4 n] [+ 4 n] [+ 3 n] bytes, no padding: every float32 array starts on a multiple of 4,
 * so decodeTile returns views into the given bytes (no copy) whenever the bytes themselves start on a
 * multiple of 4 (a fetch() ArrayBuffer always does; a Node Buffer from a pool may not, and is then copied).
 *
 * Precision: a point is origin (float64) + offset (float32). With the origin at the node's centre an offset
 * is at most half the node's edge S along each axis, and float32 keeps 24 significant bits, so the stored
 * coordinate is within half a unit in the last place of S/2 of the original: at most 2^(floor(log2(S/2)) - 24)
 * per axis (positionRoundingBound). For a 100 m node that is 2^-19 m, about 1.9 um; for a 1000 m node 31 um.
 */

export const TILE_MAGIC = 'SMT1'
export const TILE_VERSION = 1
export const TILE_HEADER_BYTES = 40

export const TILE_FLAG_COLORS = 1
export const TILE_FLAG_INTENSITIES = 2
export const TILE_FLAG_UNCERTAINTIES = 4
const KNOWN_FLAGS = TILE_FLAG_COLORS | TILE_FLAG_INTENSITIES | TILE_FLAG_UNCERTAINTIES

/** Largest count a tile may declare: the uint32 field, kept well inside what a typed array can hold. */
export const MAX_TILE_POINTS = 0x3fffffff

export type TileOrigin = [number, number, number]

export interface DecodedTile {
  count: number
  origin: TileOrigin
  /** Offsets from `origin`, metres, x y z interleaved (3 x count). */
  positions: Float32Array
  /** r g b interleaved, 0-255 (3 x count). */
  colors?: Uint8Array
  intensities?: Float32Array
  /** Per-point standard uncertainty, metres. */
  uncertainties?: Float32Array
}

export interface TileAttributes {
  colors: boolean
  intensities: boolean
  uncertainties: boolean
}

/** A tile allocated for filling in place: write into the arrays, then call finish(). */
export interface TileWriter {
  readonly count: number
  readonly positions: Float32Array
  readonly colors: Uint8Array | null
  readonly intensities: Float32Array | null
  readonly uncertainties: Float32Array | null
  /** The encoded bytes. The arrays must not be written after this. */
  finish(): Uint8Array
}

export class TileFormatError extends Error {
  constructor(message: string) {
    super(`tile: ${message}`)
    this.name = 'TileFormatError'
  }
}

const LITTLE_ENDIAN_HOST = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1

export function tileFlags(attributes: TileAttributes): number {
  return (
    (attributes.colors ? TILE_FLAG_COLORS : 0) |
    (attributes.intensities ? TILE_FLAG_INTENSITIES : 0) |
    (attributes.uncertainties ? TILE_FLAG_UNCERTAINTIES : 0)
  )
}

interface Layout {
  positions: number
  intensities: number
  uncertainties: number
  colors: number
  total: number
}

function layoutOf(count: number, flags: number): Layout {
  let at = TILE_HEADER_BYTES
  const positions = at
  at += count * 12
  const intensities = flags & TILE_FLAG_INTENSITIES ? at : -1
  if (intensities >= 0) at += count * 4
  const uncertainties = flags & TILE_FLAG_UNCERTAINTIES ? at : -1
  if (uncertainties >= 0) at += count * 4
  const colors = flags & TILE_FLAG_COLORS ? at : -1
  if (colors >= 0) at += count * 3
  return { positions, intensities, uncertainties, colors, total: at }
}

export function tileByteLength(count: number, attributes: TileAttributes): number {
  return layoutOf(count, tileFlags(attributes)).total
}

/**
 * The largest rounding error per axis of a position stored in a node of edge `nodeSize` metres (origin at
 * the centre): half a float32 ulp at |offset| = nodeSize / 2.
 */
export function positionRoundingBound(nodeSize: number): number {
  const half = nodeSize / 2
  if (!(half > 0)) return 0
  return 2 ** (Math.floor(Math.log2(half)) - 24)
}

function writeHeader(view: DataView, count: number, flags: number, origin: TileOrigin): void {
  for (let i = 0; i < 4; i++) view.setUint8(i, TILE_MAGIC.charCodeAt(i))
  view.setUint16(4, TILE_VERSION, true)
  view.setUint16(6, flags, true)
  view.setUint32(8, count, true)
  view.setUint32(12, 0, true)
  view.setFloat64(16, origin[0], true)
  view.setFloat64(24, origin[1], true)
  view.setFloat64(32, origin[2], true)
}

function checkCount(count: number): void {
  if (!Number.isInteger(count) || count < 0 || count > MAX_TILE_POINTS) {
    throw new TileFormatError(`count ${count} is not a whole number from 0 to ${MAX_TILE_POINTS}`)
  }
}

function checkOrigin(origin: TileOrigin): void {
  if (origin.length !== 3 || !origin.every(Number.isFinite)) throw new TileFormatError('origin must be three finite numbers')
}

/**
 * Allocates one tile and hands out its arrays to fill in place (no intermediate copy). On a little-endian
 * host the arrays are views into the tile's bytes; on a big-endian one they are separate and finish()
 * writes them out little-endian.
 */
export function allocateTile(count: number, origin: TileOrigin, attributes: TileAttributes): TileWriter {
  checkCount(count)
  checkOrigin(origin)
  const flags = tileFlags(attributes)
  const layout = layoutOf(count, flags)
  const bytes = new Uint8Array(layout.total)
  const view = new DataView(bytes.buffer)
  writeHeader(view, count, flags, origin)
  const floats = (offset: number, length: number): Float32Array =>
    LITTLE_ENDIAN_HOST ? new Float32Array(bytes.buffer, offset, length) : new Float32Array(length)
  const positions = floats(layout.positions, count * 3)
  const intensities = layout.intensities >= 0 ? floats(layout.intensities, count) : null
  const uncertainties = layout.uncertainties >= 0 ? floats(layout.uncertainties, count) : null
  const colors = layout.colors >= 0 ? bytes.subarray(layout.colors, layout.colors + count * 3) : null
  return {
    count,
    positions,
    colors,
    intensities,
    uncertainties,
    finish() {
      if (!LITTLE_ENDIAN_HOST) {
        writeFloats(view, layout.positions, positions)
        if (intensities) writeFloats(view, layout.intensities, intensities)
        if (uncertainties) writeFloats(view, layout.uncertainties, uncertainties)
      }
      return bytes
    },
  }
}

function writeFloats(view: DataView, offset: number, values: Float32Array): void {
  for (let i = 0; i < values.length; i++) view.setFloat32(offset + i * 4, values[i]!, true)
}

function checkLength(name: string, array: ArrayLike<number> | undefined, expected: number): void {
  if (array && array.length !== expected) {
    throw new TileFormatError(`${name} holds ${array.length} values, expected ${expected}`)
  }
}

/** Encodes a tile from arrays already in tile form (float32 offsets from `origin`). */
export function encodeTile(tile: DecodedTile): Uint8Array {
  const { count } = tile
  checkCount(count)
  checkLength('positions', tile.positions, count * 3)
  checkLength('colors', tile.colors, count * 3)
  checkLength('intensities', tile.intensities, count)
  checkLength('uncertainties', tile.uncertainties, count)
  const writer = allocateTile(count, tile.origin, {
    colors: tile.colors !== undefined,
    intensities: tile.intensities !== undefined,
    uncertainties: tile.uncertainties !== undefined,
  })
  writer.positions.set(tile.positions)
  if (tile.colors) writer.colors!.set(tile.colors)
  if (tile.intensities) writer.intensities!.set(tile.intensities)
  if (tile.uncertainties) writer.uncertainties!.set(tile.uncertainties)
  return writer.finish()
}

function readFloats(bytes: Uint8Array, offset: number, length: number): Float32Array {
  const start = bytes.byteOffset + offset
  if (LITTLE_ENDIAN_HOST) {
    if (start % 4 === 0) return new Float32Array(bytes.buffer, start, length)
    // Copy explicitly: slice() on a Node Buffer returns a view, not a copy.
    const copy = new Float32Array(length)
    new Uint8Array(copy.buffer).set(bytes.subarray(offset, offset + length * 4))
    return copy
  }
  const view = new DataView(bytes.buffer, start, length * 4)
  const out = new Float32Array(length)
  for (let i = 0; i < length; i++) out[i] = view.getFloat32(i * 4, true)
  return out
}

/** Decodes a tile; the arrays are views into `bytes` where alignment allows (see the header comment). */
export function decodeTile(bytes: Uint8Array): DecodedTile {
  if (bytes.byteLength < TILE_HEADER_BYTES) {
    throw new TileFormatError(`${bytes.byteLength} bytes is shorter than the ${TILE_HEADER_BYTES}-byte header`)
  }
  for (let i = 0; i < 4; i++) {
    if (bytes[i] !== TILE_MAGIC.charCodeAt(i)) throw new TileFormatError(`does not start with ${TILE_MAGIC}`)
  }
  const view = new DataView(bytes.buffer, bytes.byteOffset, TILE_HEADER_BYTES)
  const version = view.getUint16(4, true)
  if (version !== TILE_VERSION) throw new TileFormatError(`version ${version} is not supported (expected ${TILE_VERSION})`)
  const flags = view.getUint16(6, true)
  if (flags & ~KNOWN_FLAGS) throw new TileFormatError(`unknown flags 0x${flags.toString(16)}`)
  const count = view.getUint32(8, true)
  checkCount(count)
  const origin: TileOrigin = [view.getFloat64(16, true), view.getFloat64(24, true), view.getFloat64(32, true)]
  checkOrigin(origin)
  const layout = layoutOf(count, flags)
  if (bytes.byteLength !== layout.total) {
    throw new TileFormatError(`${bytes.byteLength} bytes, but ${count} points with these attributes take ${layout.total}`)
  }
  const tile: DecodedTile = { count, origin, positions: readFloats(bytes, layout.positions, count * 3) }
  if (layout.intensities >= 0) tile.intensities = readFloats(bytes, layout.intensities, count)
  if (layout.uncertainties >= 0) tile.uncertainties = readFloats(bytes, layout.uncertainties, count)
  // A plain Uint8Array view even when `bytes` is a Node Buffer.
  if (layout.colors >= 0) tile.colors = new Uint8Array(bytes.buffer, bytes.byteOffset + layout.colors, count * 3)
  return tile
}
