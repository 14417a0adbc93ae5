/**
 * Reads decimal numbers straight from bytes, without making a string per number.
 *
 * Grammar (a subset of ECMAScript's StringNumericLiteral, plus nan/inf words that scanners write):
 *   [+-] (digits [. digits?] | . digits) ([eE] [+-] digits)?   |   [+-] (nan | inf | infinity), any case
 * Results equal JavaScript's Number() on the same text: a mantissa of at most 15 significant digits and
 * a power of ten within 1e+-22 are both exact doubles, so one multiplication or division rounds once,
 * correctly (Clinger's fast path); anything longer falls back to Number() on that one token.
 */

const POW10 = [
  1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19,
  1e20, 1e21, 1e22,
]

const DIGIT_0 = 48
const PLUS = 43
const MINUS = 45
const DOT = 46
const LOWER = 0x20

export class NumberScanner {
  /** The value of the last successful read. */
  value = 0
  /** The decimal mark: '.' (46) unless a file uses ',' (44). */
  decimal = DOT

  /** Reads bytes [start, end) as one number. Returns false (value untouched) when it is not one. */
  read(bytes: Uint8Array, start: number, end: number): boolean {
    let i = start
    if (i >= end) return false
    let negative = false
    let c = bytes[i] as number
    if (c === PLUS || c === MINUS) {
      negative = c === MINUS
      i++
      if (i >= end) return false
      c = bytes[i] as number
    }
    const decimal = this.decimal
    if (c - DIGIT_0 > 9 && c !== decimal) return this.readWord(bytes, i, end, negative)

    let mantissa = 0
    let significant = 0
    let exponent = 0
    let digits = 0
    // Integer part.
    while (i < end) {
      const d = (bytes[i] as number) - DIGIT_0
      if (d < 0 || d > 9) break
      if (mantissa !== 0 || d !== 0) {
        if (significant < 19) mantissa = mantissa * 10 + d
        else exponent++
        significant++
      }
      digits++
      i++
    }
    // Fraction.
    if (i < end && bytes[i] === decimal) {
      i++
      while (i < end) {
        const d = (bytes[i] as number) - DIGIT_0
        if (d < 0 || d > 9) break
        if (mantissa !== 0 || d !== 0) {
          if (significant < 19) {
            mantissa = mantissa * 10 + d
            exponent--
          }
          significant++
        } else {
          exponent--
        }
        digits++
        i++
      }
    }
    if (digits === 0) return false
    // Exponent.
    if (i < end && ((bytes[i] as number) | LOWER) === 101) {
      i++
      let expNegative = false
      if (i < end && (bytes[i] === PLUS || bytes[i] === MINUS)) {
        expNegative = bytes[i] === MINUS
        i++
      }
      let e = 0
      let expDigits = 0
      while (i < end) {
        const d = (bytes[i] as number) - DIGIT_0
        if (d < 0 || d > 9) break
        if (e < 100000) e = e * 10 + d
        expDigits++
        i++
      }
      if (expDigits === 0) return false
      exponent += expNegative ? -e : e
    }
    if (i !== end) return false

    let value: number
    if (mantissa === 0) {
      value = 0
    } else if (significant <= 15 && exponent >= -22 && exponent <= 22) {
      value = exponent < 0 ? mantissa / (POW10[-exponent] as number) : mantissa * (POW10[exponent] as number)
    } else {
      value = this.slow(bytes, start, end)
      this.value = value
      return true
    }
    this.value = negative ? -value : value
    return true
  }

  /** nan, inf, infinity in any case, after an optional sign (already consumed). */
  private readWord(bytes: Uint8Array, i: number, end: number, negative: boolean): boolean {
    const length = end - i
    if (length !== 3 && length !== 8) return false
    let word = ''
    for (let k = i; k < end; k++) word += String.fromCharCode((bytes[k] as number) | LOWER)
    if (word === 'nan') {
      this.value = NaN
      return true
    }
    if (word === 'inf' || word === 'infinity') {
      this.value = negative ? -Infinity : Infinity
      return true
    }
    return false
  }

  /** Long mantissas and large exponents: let the engine round (the token's grammar is already checked). */
  private slow(bytes: Uint8Array, start: number, end: number): number {
    let text = ''
    for (let k = start; k < end; k++) {
      const c = bytes[k] as number
      text += c === this.decimal ? '.' : String.fromCharCode(c)
    }
    return Number(text)
  }
}
