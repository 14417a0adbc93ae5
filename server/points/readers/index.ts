import { E57MemoryReader } from './e57Reader'
import { ScanFormatError } from './errors'
import { LasReader } from './lasReader'
import { LazReader } from './lazReader'
import { PcdReader } from './pcdReader'
import { PlyReader } from './plyReader'
import { StationLogReader } from './stationLogReader'
import type { PointBatch, PointReader, ReadSummary, ReaderOptions, ScanFormat, ScanHeaderInfo } from './types'
import { XyzReader } from './xyzReader'

/**
 * Streaming point-cloud readers. Typical use in a job:
 *
 *   const format = detectFormat(firstBytes, fileName)
 *   const reader = createReader(format, { onBatch, byteLength: size })
 *   for await (const chunk of stream) reader.push(chunk)
 *   const summary = await reader.end()
 *
 * Bad input throws ScanFormatError (its message names the line, byte or header field) and nothing else.
 */

export { ScanFormatError } from './errors'
export { SNIFF_BYTES, detectFormat, fileExtension } from './detectFormat'
export type * from './types'

export { E57File, E57MemoryReader, openE57, type E57OpenOptions, type E57ReadOptions } from './e57Reader'
export { memorySource, type ByteSource } from './byteSource'

export const SCAN_FORMATS: readonly ScanFormat[] = ['ply', 'xyz', 'pcd', 'las', 'laz', 'station-log', 'e57']

export function createReader(format: ScanFormat, options: ReaderOptions): PointReader {
  switch (format) {
    case 'ply':
      return new PlyReader(options)
    case 'xyz':
      return new XyzReader(options)
    case 'pcd':
      return new PcdReader(options)
    case 'las':
      return new LasReader(options)
    case 'laz':
      return new LazReader(options)
    case 'station-log':
      return new StationLogReader(options)
    case 'e57':
      // In memory; uploads go through openE57 with ranged reads (see e57Reader.ts).
      return new E57MemoryReader(options)
    default: {
      const name = String(format)
      throw new ScanFormatError(`'${name}' is not a format Spanmark reads (${SCAN_FORMATS.join(', ')})`)
    }
  }
}

/** A whole point cloud in memory (tests, small files). */
export interface PointCloud {
  count: number
  positions: Float64Array
  colors?: Uint8Array
  intensities?: Float32Array
  uncertainties?: Float32Array
  header: ScanHeaderInfo
  summary: ReadSummary
}

export interface ReadAllOptions extends Omit<ReaderOptions, 'onBatch' | 'reuseBuffers'> {
  /** Push the bytes in chunks of this size (default: all at once). */
  chunkSize?: number
}

/** Reads a whole file held in memory through the streaming reader and joins the batches. */
export async function readAll(bytes: Uint8Array, format: ScanFormat, options: ReadAllOptions = {}): Promise<PointCloud> {
  const batches: PointBatch[] = []
  const { chunkSize, ...rest } = options
  const reader = createReader(format, { byteLength: bytes.length, ...rest, onBatch: (b) => batches.push(b) })
  const step = chunkSize && chunkSize > 0 ? chunkSize : Math.max(1, bytes.length)
  for (let at = 0; at < bytes.length; at += step) reader.push(bytes.subarray(at, Math.min(bytes.length, at + step)))
  const summary = await reader.end()
  const count = summary.pointCount
  const cloud: PointCloud = { count, positions: new Float64Array(count * 3), header: summary.header, summary }
  const first = batches[0]
  if (first?.colors) cloud.colors = new Uint8Array(count * 3)
  if (first?.intensities) cloud.intensities = new Float32Array(count)
  if (first?.uncertainties) cloud.uncertainties = new Float32Array(count)
  let at = 0
  for (const batch of batches) {
    cloud.positions.set(batch.positions, at * 3)
    if (cloud.colors && batch.colors) cloud.colors.set(batch.colors, at * 3)
    if (cloud.intensities && batch.intensities) cloud.intensities.set(batch.intensities, at)
    if (cloud.uncertainties && batch.uncertainties) cloud.uncertainties.set(batch.uncertainties, at)
    at += batch.count
  }
  return cloud
}
