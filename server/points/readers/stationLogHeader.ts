import { errorInHeader } from './errors'
import { clip } from './textUtil'
import type { LaserClass, StationLogHeaderInfo, Vec3 } from './types'

/**
 * The header of Spanmark's station log (format described in README.md beside this file): the first
 * line `# spanmark-station-log 1`, then `key: value` lines until the first reading.
 */

export const STATION_LOG_MAGIC = '# spanmark-station-log'

const LASER_CLASSES: readonly LaserClass[] = ['1', '1M', '2', '2M', '3R', '3B', '4']

type Kind = 'text' | 'number' | 'vector' | 'count' | 'class'

const KEYS: Record<string, { kind: Kind; required: boolean }> = {
  station: { kind: 'text', required: true },
  position: { kind: 'vector', required: true },
  heading: { kind: 'number', required: true },
  'axis-offset': { kind: 'vector', required: false },
  'beam-offset': { kind: 'vector', required: false },
  'range-zero-offset': { kind: 'number', required: false },
  'rated-range': { kind: 'number', required: true },
  'laser-class': { kind: 'class', required: true },
  'shots-per-reading': { kind: 'count', required: true },
  'min-valid-samples': { kind: 'count', required: false },
  'range-uncertainty': { kind: 'number', required: true },
  'angular-uncertainty': { kind: 'number', required: true },
  instrument: { kind: 'text', required: false },
  captured: { kind: 'text', required: false },
  note: { kind: 'text', required: false },
}

type Value = string | number | Vec3

export class StationLogHeaderParser {
  private readonly values = new Map<string, { value: Value; line: number }>()
  lastLine = 0

  /** Line 1 must be the magic line with version 1. */
  magic(text: string, line: number): void {
    const trimmed = text.trim()
    if (!trimmed.startsWith(STATION_LOG_MAGIC)) {
      throw errorInHeader(`a station log starts with '${STATION_LOG_MAGIC} 1'`, { line })
    }
    const version = trimmed.slice(STATION_LOG_MAGIC.length).trim()
    if (version !== '1') throw errorInHeader(`station log version '${clip(version)}' is not 1`, { line })
  }

  /** One header line (comments already stripped, not blank). */
  line(text: string, line: number): void {
    this.lastLine = line
    const colon = text.indexOf(':')
    if (colon < 0) throw errorInHeader(`expected 'key: value', found '${clip(text.trim())}'`, { line })
    const key = text.slice(0, colon).trim().toLowerCase()
    const raw = text.slice(colon + 1).trim()
    const spec = KEYS[key]
    if (!spec) throw errorInHeader(`'${clip(key)}' is not a station log key (${Object.keys(KEYS).join(', ')})`, { line })
    if (this.values.has(key)) throw errorInHeader(`'${key}' given twice`, { line })
    this.values.set(key, { value: parseValue(key, spec.kind, raw, line), line })
  }

  finish(firstDataLine: number): StationLogHeaderInfo {
    for (const [key, spec] of Object.entries(KEYS)) {
      if (spec.required && !this.values.has(key)) {
        throw errorInHeader(`missing '${key}' (needed before the first reading on line ${firstDataLine})`, { field: key })
      }
    }
    const get = <T extends Value>(key: string, fallback: T): T => (this.values.get(key)?.value as T) ?? fallback
    const lineOf = (key: string) => this.values.get(key)?.line ?? firstDataLine
    const shots = get<number>('shots-per-reading', 1)
    const ratedRange = get<number>('rated-range', 0)
    if (!(ratedRange > 0)) throw errorInHeader(`rated-range ${ratedRange} must be above 0`, { line: lineOf('rated-range') })
    // Two valid samples at least, or their spread (and so the random part of the uncertainty) is unknown.
    const minValid = get<number>('min-valid-samples', Math.max(2, Math.ceil(shots / 2)))
    if (minValid < 2) {
      throw errorInHeader('min-valid-samples must be at least 2 (the spread of the samples needs two)', {
        line: lineOf('min-valid-samples'),
      })
    }
    if (minValid > shots) {
      throw errorInHeader(`min-valid-samples ${minValid} is more than shots-per-reading ${shots}`, {
        line: lineOf('min-valid-samples'),
      })
    }
    for (const key of ['range-uncertainty', 'angular-uncertainty']) {
      if (get<number>(key, 0) < 0) throw errorInHeader(`${key} may not be negative`, { line: lineOf(key) })
    }
    const text = (key: string): string | null => (this.values.has(key) ? get<string>(key, '') : null)
    return {
      format: 'station-log',
      version: 1,
      stationId: get<string>('station', ''),
      position: get<Vec3>('position', [0, 0, 0]),
      headingDeg: get<number>('heading', 0),
      axisOffset: get<Vec3>('axis-offset', [0, 0, 0]),
      beamOffset: get<Vec3>('beam-offset', [0, 0, 0]),
      rangeZeroOffset: get<number>('range-zero-offset', 0),
      ratedRange,
      laserClass: get<string>('laser-class', '1') as LaserClass,
      shotsPerReading: shots,
      minValidSamples: minValid,
      rangeUncertainty: get<number>('range-uncertainty', 0),
      angularUncertaintyDeg: get<number>('angular-uncertainty', 0),
      instrument: text('instrument'),
      captured: text('captured'),
      note: text('note'),
      hasColor: false,
      hasIntensity: false,
      hasUncertainty: true,
      declaredPointCount: null,
    }
  }
}

function parseValue(key: string, kind: Kind, raw: string, line: number): Value {
  if (raw === '') throw errorInHeader(`'${key}' has no value`, { line })
  switch (kind) {
    case 'text':
      return raw
    case 'class': {
      const upper = raw.toUpperCase()
      const found = LASER_CLASSES.find((c) => c === upper)
      if (!found) {
        throw errorInHeader(
          `laser-class '${clip(raw)}' is not an IEC 60825-1 class (${LASER_CLASSES.join(', ')})`,
          { line },
        )
      }
      return found
    }
    case 'number': {
      const value = number(raw)
      if (value === null) throw errorInHeader(`${key} '${clip(raw)}' is not a number`, { line })
      return value
    }
    case 'count': {
      const value = number(raw)
      if (value === null || !Number.isInteger(value) || value < 1) {
        throw errorInHeader(`${key} '${clip(raw)}' is not a whole number of at least 1`, { line })
      }
      return value
    }
    case 'vector': {
      const parts = raw.split(/[\s,]+/).map(number)
      if (parts.length !== 3 || parts.some((p) => p === null)) {
        throw errorInHeader(`${key} '${clip(raw)}' is not three numbers`, { line })
      }
      return parts as Vec3
    }
  }
}

function number(text: string): number | null {
  if (!/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text)) return null
  const value = Number(text)
  return Number.isFinite(value) ? value : null
}

/** Strips a `#` comment; returns the rest of the line. */
export function stripComment(text: string): string {
  const hash = text.indexOf('#')
  return hash >= 0 ? text.slice(0, hash) : text
}
