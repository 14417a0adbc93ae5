import { describe, expect, it } from 'vitest'
import { NumberScanner } from '../../../server/points/readers/numberScanner'

/**
 * The byte-level number scanner against the JavaScript engine's own Number(string), which ECMA-262
 * (section 7.1.4.1.1, StringToNumber, "RoundMVResult") requires to round correctly; every accepted token
 * must give exactly the same double.
 */

const scanner = new NumberScanner()
const bytes = (s: string) => Uint8Array.from(s, (c) => c.charCodeAt(0))
function scan(text: string): number | null {
  const b = bytes(text)
  return scanner.read(b, 0, b.length) ? scanner.value : null
}

describe('NumberScanner', () => {
  it('signs, leading +, .5, 5., exponents, leading zeros, -0', () => {
    for (const text of ['0', '-0', '+0', '1', '+1', '-1', '.5', '-.5', '+.5', '5.', '5.e3', '0.1', '0.3', '1e3', '1E-3', '1e+3', '-2.5e-7', '00012.5000', '0.0000001', '123456789012345', '9007199254740993', '1.7976931348623157e308', '4.9e-324', '1e400', '1e-400', '3.14159265358979323846264338327950288']) {
      expect(Object.is(scan(text), Number(text)), text).toBe(true)
    }
  })

  it('random decimals agree with Number() bit for bit', () => {
    let seed = 12345
    const random = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648)
    const digits = (n: number) => Array.from({ length: n }, () => Math.floor(random() * 10)).join('')
    for (let i = 0; i < 20000; i++) {
      const sign = ['', '-', '+'][Math.floor(random() * 3)]
      const whole = digits(Math.floor(random() * 12))
      const fraction = digits(Math.floor(random() * 12))
      let text = `${sign}${whole}${fraction || !whole ? `.${fraction || '5'}` : ''}`
      if (random() < 0.3) text += `e${['', '-', '+'][Math.floor(random() * 3)]}${Math.floor(random() * 40)}`
      expect(Object.is(scan(text), Number(text)), text).toBe(true)
    }
  })

  it('refuses what is not one number', () => {
    for (const text of ['', '+', '-', '.', 'e5', '1e', '1e+', '1.2.3', '0x10', '1_000', '--1', '1-', 'abc', ' 1', '1 ', '1,5', 'in', 'nanx']) {
      expect(scan(text), text).toBeNull()
    }
  })

  it('nan and inf words (as scanners write them) and a decimal comma when asked', () => {
    expect(scan('nan')).toBeNaN()
    expect(scan('NaN')).toBeNaN()
    expect(scan('-inf')).toBe(-Infinity)
    expect(scan('Infinity')).toBe(Infinity)
    const comma = new NumberScanner()
    comma.decimal = 44
    const b = bytes('-12,125')
    expect(comma.read(b, 0, b.length)).toBe(true)
    expect(comma.value).toBe(-12.125)
  })
})
