/**
 * The hot loops of fixed-length binary records, as small top-level functions: each stays monomorphic
 * and is optimised on its own, early in a file (a loop buried in a larger method waits longer for its
 * optimised code). `first` is the byte offset of the first record, `stride` the record length.
 */

/** Three float32 per record at offsets a, b, c into out[w..] as x y z. */
export function float32Triples(
  view: DataView,
  first: number,
  stride: number,
  count: number,
  a: number,
  b: number,
  c: number,
  littleEndian: boolean,
  out: Float64Array,
  w: number,
): void {
  if (littleEndian) {
    for (let i = 0, at = first; i < count; i++, at += stride, w += 3) {
      out[w] = view.getFloat32(at + a, true)
      out[w + 1] = view.getFloat32(at + b, true)
      out[w + 2] = view.getFloat32(at + c, true)
    }
  } else {
    for (let i = 0, at = first; i < count; i++, at += stride, w += 3) {
      out[w] = view.getFloat32(at + a, false)
      out[w + 1] = view.getFloat32(at + b, false)
      out[w + 2] = view.getFloat32(at + c, false)
    }
  }
}

/** Three bytes per record at offsets a, b, c into out[w..]. */
export function byteTriples(
  view: DataView,
  first: number,
  stride: number,
  count: number,
  a: number,
  b: number,
  c: number,
  out: Uint8Array,
  w: number,
): void {
  for (let i = 0, at = first; i < count; i++, at += stride, w += 3) {
    out[w] = view.getUint8(at + a)
    out[w + 1] = view.getUint8(at + b)
    out[w + 2] = view.getUint8(at + c)
  }
}

/**
 * LAS records (ASPRS LAS 1.4 R15, Tables 7 and 13: X Y Z int32 at 0, 4, 8, intensity u16 at 12, all
 * little-endian): X = X_record * scale + offset in doubles, into out[w..]; intensity into values[j..].
 */
export function lasCoordinates(
  view: DataView,
  first: number,
  stride: number,
  count: number,
  scale: readonly [number, number, number],
  offset: readonly [number, number, number],
  out: Float64Array,
  w: number,
  intensities: Float32Array,
  j: number,
): void {
  const [sx, sy, sz] = scale
  const [ox, oy, oz] = offset
  for (let i = 0, at = first; i < count; i++, at += stride, w += 3, j++) {
    out[w] = view.getInt32(at, true) * sx + ox
    out[w + 1] = view.getInt32(at + 4, true) * sy + oy
    out[w + 2] = view.getInt32(at + 8, true) * sz + oz
    intensities[j] = view.getUint16(at + 12, true)
  }
}

/** 16-bit RGB at `color` in each record (LAS formats 2, 3, 7, 8), keeping the high byte. */
export function lasColors(view: DataView, first: number, stride: number, count: number, color: number, out: Uint8Array, w: number): void {
  for (let i = 0, at = first + color; i < count; i++, at += stride, w += 3) {
    out[w] = view.getUint16(at, true) >>> 8
    out[w + 1] = view.getUint16(at + 2, true) >>> 8
    out[w + 2] = view.getUint16(at + 4, true) >>> 8
  }
}
