/**
 * Binary scalar types as small integer codes, so hot loops switch on a number. (Plain constants rather
 * than a const enum: the files are compiled one at a time.)
 */
export type ScalarCode = number

export const INT8 = 0
export const UINT8 = 1
export const INT16 = 2
export const UINT16 = 3
export const INT32 = 4
export const UINT32 = 5
export const FLOAT32 = 6
export const FLOAT64 = 7
export const INT64 = 8
export const UINT64 = 9

export const SCALAR_SIZE: readonly number[] = [1, 1, 2, 2, 4, 4, 4, 8, 8, 8]

export function readScalar(view: DataView, offset: number, type: ScalarCode, littleEndian: boolean): number {
  switch (type) {
    case FLOAT32:
      return view.getFloat32(offset, littleEndian)
    case FLOAT64:
      return view.getFloat64(offset, littleEndian)
    case UINT8:
      return view.getUint8(offset)
    case INT8:
      return view.getInt8(offset)
    case INT16:
      return view.getInt16(offset, littleEndian)
    case UINT16:
      return view.getUint16(offset, littleEndian)
    case INT32:
      return view.getInt32(offset, littleEndian)
    case UINT32:
      return view.getUint32(offset, littleEndian)
    case INT64:
      return Number(view.getBigInt64(offset, littleEndian))
    default:
      return Number(view.getBigUint64(offset, littleEndian))
  }
}

/**
 * A colour channel in 0-255 from a value of the given type: 8-bit as is, 16-bit keeps its high byte,
 * floating point is taken as 0-1, other integers are clamped.
 */
export function colorChannel(value: number, type: ScalarCode): number {
  switch (type) {
    case UINT8:
      return value
    case UINT16:
      return value >>> 8
    case FLOAT32:
    case FLOAT64:
      return value >= 1 ? 255 : value > 0 ? Math.round(value * 255) : 0
    default:
      return value >= 255 ? 255 : value > 0 ? Math.round(value) : 0
  }
}
