/**
 * Writes binary little-endian PLY (Turk 1994): a `vertex` element with float64 x y z and optional uchar
 * red green blue and float32 intensity. Used by the demo generator and the benches.
 */
export interface PlyPoints {
  count: number
  positions: Float64Array
  colors?: Uint8Array
  intensities?: Float32Array
}

export function writeBinaryPly(points: PlyPoints, comments: string[] = []): Buffer {
  const { count, colors, intensities } = points
  const header = [
    'ply',
    'format binary_little_endian 1.0',
    ...comments.map((c) => `comment ${c}`),
    `element vertex ${count}`,
    'property double x',
    'property double y',
    'property double z',
    ...(colors ? ['property uchar red', 'property uchar green', 'property uchar blue'] : []),
    ...(intensities ? ['property float intensity'] : []),
    'end_header',
    '',
  ].join('\n')
  const stride = 24 + (colors ? 3 : 0) + (intensities ? 4 : 0)
  const head = Buffer.from(header, 'ascii')
  const out = Buffer.alloc(head.length + stride * count)
  head.copy(out)
  let o = head.length
  for (let i = 0; i < count; i++) {
    out.writeDoubleLE(points.positions[i * 3]!, o)
    out.writeDoubleLE(points.positions[i * 3 + 1]!, o + 8)
    out.writeDoubleLE(points.positions[i * 3 + 2]!, o + 16)
    o += 24
    if (colors) {
      out[o] = colors[i * 3]!
      out[o + 1] = colors[i * 3 + 1]!
      out[o + 2] = colors[i * 3 + 2]!
      o += 3
    }
    if (intensities) {
      out.writeFloatLE(intensities[i]!, o)
      o += 4
    }
  }
  return out
}
