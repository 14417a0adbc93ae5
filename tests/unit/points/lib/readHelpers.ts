import { readFileSync } from 'node:fs'
import { fileURLToPath } from 'node:url'
import { createReader, type PointBatch, type ScanFormat } from '../../../../server/points/readers/index'

export const FIXTURES = fileURLToPath(new URL('../../../fixtures/', import.meta.url))

export function fixture(name: string): Uint8Array {
  return new Uint8Array(readFileSync(`${FIXTURES}${name}`))
}

export interface Collected {
  count: number
  positions: number[]
  colors: number[] | null
  intensities: number[] | null
  uncertainties: number[] | null
  dropped: Record<string, number | undefined>
  batches: number
}

/** Feeds the given pieces to a fresh reader and gathers what comes out. */
export async function readPieces(
  pieces: Uint8Array[],
  format: ScanFormat,
  batchSize?: number,
): Promise<Collected> {
  const out: Collected = { count: 0, positions: [], colors: null, intensities: null, uncertainties: null, dropped: {}, batches: 0 }
  const take = (b: PointBatch) => {
    out.batches++
    out.count += b.count
    out.positions.push(...b.positions)
    if (b.colors) (out.colors ??= []).push(...b.colors)
    if (b.intensities) (out.intensities ??= []).push(...b.intensities)
    if (b.uncertainties) (out.uncertainties ??= []).push(...b.uncertainties)
  }
  const reader = createReader(format, { onBatch: take, ...(batchSize ? { batchSize } : {}) })
  for (const piece of pieces) reader.push(piece)
  const summary = await reader.end()
  out.dropped = { ...summary.dropped }
  return out
}

export function splitAt(bytes: Uint8Array, cut: number): Uint8Array[] {
  // Copies, so that a reader keeping a view into a chunk would be caught by the later overwrite.
  return [bytes.slice(0, cut), bytes.slice(cut)]
}

export function byteByByte(bytes: Uint8Array): Uint8Array[] {
  const scratch = new Uint8Array(1)
  const pieces: Uint8Array[] = []
  for (const b of bytes) {
    scratch[0] = b
    pieces.push(scratch.slice())
  }
  return pieces
}

export function sameAs(a: Collected, b: Collected): boolean {
  const eq = (x: number[] | null, y: number[] | null) =>
    x === y || (x !== null && y !== null && x.length === y.length && x.every((v, i) => Object.is(v, y[i])))
  return (
    a.count === b.count &&
    eq(a.positions, b.positions) &&
    eq(a.colors, b.colors) &&
    eq(a.intensities, b.intensities) &&
    eq(a.uncertainties, b.uncertainties) &&
    JSON.stringify(a.dropped) === JSON.stringify(b.dropped)
  )
}

/** Bounds of xyz triples. */
export function boundsOf(positions: ArrayLike<number>): { min: number[]; max: number[] } {
  const min = [Infinity, Infinity, Infinity]
  const max = [-Infinity, -Infinity, -Infinity]
  for (let i = 0; i < positions.length; i += 3) {
    for (let a = 0; a < 3; a++) {
      const v = positions[i + a] as number
      if (v < (min[a] as number)) min[a] = v
      if (v > (max[a] as number)) max[a] = v
    }
  }
  return { min, max }
}

