import { panTiltPoint, type PanTiltMount } from '@shared/geometry/panTiltMount'
import { rangeAngleUncertainty } from '@shared/geometry/rangeAngleUncertainty'
import { readingStatistics } from '@shared/geometry/repeatedReadings'
import { applyStationPose } from '@shared/geometry/stationPose'
import { errorAtLine, type ScanErrorLocation } from './errors'
import { LineSplitter } from './lineSplitter'
import { NumberScanner } from './numberScanner'
import { ReaderBase } from './readerBase'
import { StationLogHeaderParser, stripComment } from './stationLogHeader'
import { latin1, notANumber } from './textUtil'
import type { ReaderOptions, StationLogHeaderInfo } from './types'

/**
 * Spanmark's station log: one row per reading of a pan/tilt/range head (pan and tilt in degrees, then
 * the range samples in metres). Each kept reading becomes one point: the mean of its valid samples
 * (plus the range zero offset) placed through the mount's offsets and the station pose, with a per-point
 * standard uncertainty from the samples' spread and the instrument's stated terms. Readings with too few
 * valid samples, or whose range is beyond the instrument's rated range, are left out and counted.
 * See README.md for the format.
 */

const DEG = Math.PI / 180

export class StationLogReader extends ReaderBase {
  readonly format = 'station-log' as const
  declare header: StationLogHeaderInfo | null
  private readonly lines = new LineSplitter((b, s, e, l) => this.onLine(b, s, e, l))
  private readonly parser = new StationLogHeaderParser()
  private readonly scanner = new NumberScanner()
  private mount: PanTiltMount | null = null
  private samples = new Float64Array(0)
  private readonly stats = { count: 0, mean: 0, standardDeviation: 0, standardErrorOfMean: 0 }
  private readonly uncertainty = { alongBeam: 0, acrossBeam: 0, perAxis: 0 }
  private readonly local = new Float64Array(3)
  private heading = 0
  private angular = 0
  private readings = 0

  constructor(options: ReaderOptions) {
    super(options)
  }

  protected consume(chunk: Uint8Array): void {
    this.lines.push(chunk)
  }

  protected finish(): void {
    this.lines.end()
    if (this.lines.line === 0) return
    if (!this.header) this.startReadings(this.lines.line + 1)
  }

  protected override endLocation(): ScanErrorLocation {
    return { line: Math.max(1, this.lines.line) }
  }

  protected override noPointsDetail(): string {
    if (this.readings === 0) return ' (no readings after the header)'
    const beyond = this.dropped.beyondRatedRange ?? 0
    const few = this.dropped.tooFewSamples ?? 0
    return ` (all ${this.readings} readings were left out: ${beyond} beyond the rated range, ${few} with too few valid samples)`
  }

  private onLine(bytes: Uint8Array, start: number, end: number, line: number): void {
    let s = start
    if (line === 1) {
      if (end - s >= 3 && bytes[s] === 0xef && bytes[s + 1] === 0xbb && bytes[s + 2] === 0xbf) s += 3
      this.parser.magic(latin1(bytes, s, Math.min(end, s + 200)), line)
      return
    }
    while (s < end && (bytes[s] === 32 || bytes[s] === 9)) s++
    if (s === end || bytes[s] === 35) return // blank or # comment
    if (!this.header) {
      const c = bytes[s] as number
      const startsReading = (c >= 48 && c <= 57) || c === 43 || c === 45 || c === 46
      if (!startsReading) {
        const text = stripComment(latin1(bytes, s, end)).trim()
        if (text) this.parser.line(text, line)
        return
      }
      this.startReadings(line)
    }
    this.reading(bytes, s, end, line)
  }

  private startReadings(line: number): void {
    const header = this.parser.finish(line)
    this.header = header
    this.mount = {
      axisOffset: header.axisOffset,
      beamOffset: header.beamOffset,
      rangeZeroOffset: header.rangeZeroOffset,
    }
    this.heading = header.headingDeg * DEG
    this.angular = header.angularUncertaintyDeg * DEG
    this.samples = new Float64Array(header.shotsPerReading)
    this.createSink({ color: false, intensity: false, uncertainty: true }, () => ({ line: this.lines.line }))
  }

  private reading(bytes: Uint8Array, start: number, end: number, line: number): void {
    const header = this.header!
    const scanner = this.scanner
    let pos = start
    let field = 0
    let pan = 0
    let tilt = 0
    let valid = 0
    let stop = end
    // A comment may end the row.
    const hash = bytes.indexOf(35, start)
    if (hash >= 0 && hash < end) stop = hash
    while (pos < stop) {
      let next = pos
      while (next < stop && !isSeparator(bytes[next] as number)) next++
      if (next > pos) {
        if (field >= 2 + header.shotsPerReading) {
          throw errorAtLine(line, `more than the ${header.shotsPerReading} range samples of shots-per-reading`)
        }
        if (field >= 2 && isNoReturn(bytes, pos, next)) {
          // '-' marks a shot without a return.
        } else if (!scanner.read(bytes, pos, next)) {
          throw notANumber(bytes, pos, next, line, field === 0 ? 'pan' : field === 1 ? 'tilt' : `range sample ${field - 1}`)
        } else {
          const value = scanner.value
          if (field === 0) pan = value
          else if (field === 1) tilt = value
          else if (value < 0) {
            throw errorAtLine(line, `range sample ${field - 1} is negative (${value})`)
          } else if (value > 0 && Number.isFinite(value)) {
            this.samples[valid++] = value
          }
        }
        field++
      }
      pos = next + 1
    }
    if (field < 3) {
      throw errorAtLine(line, `expected pan, tilt and at least one range sample, found ${field} values`)
    }
    if (!Number.isFinite(pan)) throw errorAtLine(line, `pan ${pan} is not a finite number`)
    if (!(tilt >= -90 && tilt <= 90)) throw errorAtLine(line, `tilt ${tilt} is outside -90..90 degrees`)
    this.readings++
    if (valid < header.minValidSamples) {
      this.countDrop('tooFewSamples')
      return
    }
    const stats = readingStatistics(this.samples, valid, this.stats)
    const range = stats.mean + header.rangeZeroOffset
    if (range > header.ratedRange) {
      this.countDrop('beyondRatedRange')
      return
    }
    const sink = this.sink!
    const w = sink.count * 3
    panTiltPoint(this.mount!, stats.mean, pan * DEG, tilt * DEG, this.local, 0)
    applyStationPose(this.heading, header.position, this.local, 0, sink.positions, w)
    const meanVariance = stats.standardErrorOfMean * stats.standardErrorOfMean
    rangeAngleUncertainty(range, meanVariance, header.rangeUncertainty, this.angular, this.uncertainty)
    sink.uncertainties![sink.count] = this.uncertainty.perAxis
    sink.commit(1)
  }
}

/** Samples are separated by blanks or commas. */
function isSeparator(c: number): boolean {
  return c === 32 || c === 9 || c === 44 || c === 13
}

/** '-', 'nan' (any case): a shot without a return. ('0' is handled as a number.) */
function isNoReturn(bytes: Uint8Array, start: number, end: number): boolean {
  if (end - start === 1 && bytes[start] === 45) return true
  if (end - start !== 3) return false
  return ((bytes[start] as number) | 32) === 110 && ((bytes[start + 1] as number) | 32) === 97 && ((bytes[start + 2] as number) | 32) === 110
}
