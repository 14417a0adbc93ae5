/**
 * Shapes shared by every point reader.
 *
 * Units and frames: positions are metres as doubles, in the file's own frame (station logs: the project
 * frame given by the log's station pose, Z up). Colours are 8-bit RGB (16-bit sources keep their high byte).
 * Intensities are the file's raw values (LAS: 0-65535, PLY/PCD/XYZ: as written), not normalised.
 */

export type ScanFormat = 'ply' | 'xyz' | 'pcd' | 'las' | 'laz' | 'station-log' | 'e57'

export type Vec3 = [number, number, number]

/** Up to `batchSize` points. Arrays are exactly `count` (x3 for positions and colours) long. */
export interface PointBatch {
  count: number
  /** x y z interleaved, metres. */
  positions: Float64Array
  /** r g b interleaved, 0-255. */
  colors?: Uint8Array
  intensities?: Float32Array
  /** Per-point standard uncertainty in metres (station logs only). */
  uncertainties?: Float32Array
  /** Row and column of each point in a gridded scan (E57 rowIndex / columnIndex). */
  rows?: Int32Array
  columns?: Int32Array
}

export interface ReaderOptions {
  /**
   * Called synchronously from inside push() and end() with each full batch (and the last, partial one).
   * Unless `reuseBuffers` is set, every batch has arrays of its own that the callee may keep.
   */
  onBatch: (batch: PointBatch) => void
  /** Points per batch, default 65536. */
  batchSize?: number
  /**
   * With true, the same arrays are refilled for every batch: they are valid only during the onBatch call
   * (copy what you keep). Saves allocation on big files.
   */
  reuseBuffers?: boolean
  /**
   * The whole file's size in bytes when known (an upload's size). A header that declares more data than
   * this fails at once instead of when the body ends short.
   */
  byteLength?: number
  /** A header declaring more points than this fails at once. Default 2e9. */
  maxPoints?: number
  /** The compressed LAZ file is held whole in memory while decoded: files larger than this are refused. Default 256 MiB. */
  maxLazBytes?: number
  /**
   * PCD `DATA binary_compressed` is one LZF block, unpacked whole in memory: a block declaring more unpacked
   * bytes than this is refused before anything is allocated. Default 32 MiB.
   */
  maxPcdUnpackedBytes?: number
  /** LAZ files declaring more points than this are refused. Default: no cap beyond `maxPoints` (decoded a batch at a time). */
  maxLazPoints?: number
}

interface HeaderBase {
  hasColor: boolean
  hasIntensity: boolean
  hasUncertainty: boolean
  /** The point count the header declares (null for formats without one: XYZ, station logs). */
  declaredPointCount: number | null
}

export type PlyScalarType = 'int8' | 'uint8' | 'int16' | 'uint16' | 'int32' | 'uint32' | 'float32' | 'float64'

export interface PlyProperty {
  name: string
  type: PlyScalarType
  /** For list properties: the type of the item count. */
  countType?: PlyScalarType
}

export interface PlyElement {
  name: string
  count: number
  properties: PlyProperty[]
}

export interface PlyHeaderInfo extends HeaderBase {
  format: 'ply'
  encoding: 'ascii' | 'binary_little_endian' | 'binary_big_endian'
  elements: PlyElement[]
  comments: string[]
  /** Bytes up to and including the end_header line. */
  headerLength: number
}

export interface LasHeaderInfo extends HeaderBase {
  format: 'las' | 'laz'
  versionMajor: number
  versionMinor: number
  /** "1.2", "1.4" */
  version: string
  pointFormat: number
  recordLength: number
  headerSize: number
  offsetToPoints: number
  vlrCount: number
  evlrCount: number
  /** The point count used (LAS 1.4: the 64-bit field when set, else the legacy one). */
  pointCount: number
  legacyPointCount: number
  pointsByReturn: number[]
  scale: Vec3
  offset: Vec3
  min: Vec3
  max: Vec3
  compressed: boolean
  globalEncoding: number
  fileSourceId: number
  systemIdentifier: string
  generatingSoftware: string
  creationDayOfYear: number
  creationYear: number
}

export interface PcdField {
  name: string
  size: number
  type: 'I' | 'U' | 'F'
  count: number
}

export interface PcdHeaderInfo extends HeaderBase {
  format: 'pcd'
  version: string
  fields: PcdField[]
  width: number
  height: number
  viewpoint: number[]
  points: number
  data: 'ascii' | 'binary' | 'binary_compressed'
}

export interface TextColumnsHeaderInfo extends HeaderBase {
  format: 'xyz'
  delimiter: 'space' | 'tab' | 'comma' | 'semicolon'
  /** With ';' between columns, ',' may be the decimal mark. */
  decimalComma: boolean
  /** One name per column: x y z r g b intensity, or '' for a column that is not read. */
  columns: string[]
  /** Whether the first data-like line named the columns. */
  headerRow: boolean
}

/** IEC 60825-1 laser classes. */
export type LaserClass = '1' | '1M' | '2' | '2M' | '3R' | '3B' | '4'

export interface StationLogHeaderInfo extends HeaderBase {
  format: 'station-log'
  version: 1
  stationId: string
  /** Station position in the project frame, metres. */
  position: Vec3
  /** Rotation about +Z from the project's +x to the station's +x (pan 0), degrees anticlockwise. */
  headingDeg: number
  /** Tilt axis relative to the pan axis at the station point, in the pan frame (forward, left, up), metres. */
  axisOffset: Vec3
  /** Range origin relative to the tilt axis, in the head frame (forward along the beam, left, up), metres. */
  beamOffset: Vec3
  /** a0: added to every range sample, metres. */
  rangeZeroOffset: number
  ratedRange: number
  laserClass: LaserClass
  shotsPerReading: number
  minValidSamples: number
  /** Stated systematic range standard uncertainty, metres. */
  rangeUncertainty: number
  /** Stated angular standard uncertainty, degrees. */
  angularUncertaintyDeg: number
  instrument: string | null
  captured: string | null
  note: string | null
}

export type ScanHeaderInfo =
  | PlyHeaderInfo
  | LasHeaderInfo
  | PcdHeaderInfo
  | TextColumnsHeaderInfo
  | StationLogHeaderInfo
  | E57HeaderInfo

/**
 * Why a reading was left out: station logs (beyond the rated range, too few samples); E57 points whose
 * cartesianInvalidState / sphericalInvalidState is 2 (no data) or 1 (a direction without a usable range).
 */
export type DropReason =
  | 'beyondRatedRange'
  | 'tooFewSamples'
  | 'invalidState'
  | 'directionOnly'
  /** PCD: a point whose x, y or z is NaN (an organised cloud's pixel without a return). */
  | 'notANumber'

/** One scan (a data3D entry) of an E57 file. */
export interface E57ScanInfo {
  /** Position in /data3D. */
  index: number
  /** Its XML path, `/data3D/0`. */
  path: string
  name: string | null
  guid: string | null
  description: string | null
  /** The points' recordCount (invalid points included). */
  recordCount: number
  /** Rigid pose from the scan's own frame to the file's: rotation quaternion w x y z, translation x y z metres. */
  pose: { rotation: [number, number, number, number]; translation: Vec3 }
  coordinates: 'cartesian' | 'spherical'
  hasColor: boolean
  hasIntensity: boolean
  /** Gridded scans: rows and columns (from indexBounds, or the rowIndex/columnIndex fields' ranges). */
  grid: { rows: number; columns: number } | null
  /** The prototype's fields, in order. */
  fields: string[]
}

export interface E57HeaderInfo extends HeaderBase {
  format: 'e57'
  versionMajor: number
  versionMinor: number
  guid: string | null
  scans: E57ScanInfo[]
  /** Entries of /images2D (not read). */
  images: number
  /** What was read differently or left out, in words (images skipped, ...). */
  notes: string[]
}

export interface Bounds {
  min: Vec3
  max: Vec3
}

export interface ReadSummary {
  format: ScanFormat
  header: ScanHeaderInfo
  pointCount: number
  bounds: Bounds
  /** Readings left out, by reason (station logs; empty for other formats). */
  dropped: Partial<Record<DropReason, number>>
}

/**
 * A push-based streaming reader. Feed the file in chunks of any size (the reader keeps no reference to a
 * chunk after push returns), then await end(). Bad input throws ScanFormatError from push or end; after
 * that the reader stays failed and rethrows the same error.
 */
export interface PointReader {
  readonly format: ScanFormat
  /** Known once the header has been read (XYZ: after the first data line). */
  readonly header: ScanHeaderInfo | null
  /** Points delivered so far. */
  readonly pointCount: number
  readonly dropped: Readonly<Partial<Record<DropReason, number>>>
  push(chunk: Uint8Array): void
  end(): Promise<ReadSummary>
}
