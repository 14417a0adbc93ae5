// State words keep 4.5:1 on the drawer's light surfaces: WCAG 2.1 success criterion 1.4.3, with its
// relative luminance and contrast ratio definitions. The formula is first checked on two known pairs:
// black on white is 21:1 (the definition's maximum) and #767676 on white about 4.54:1 (from memory: the
// lightest grey commonly cited as passing AA on white).
import { describe, expect, it } from 'vitest'
import { LIGHT_SURFACES, TONE_TEXT } from '@/components/markers/stateTones'

function luminance(hex: string): number {
  const [r, g, b] = [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16) / 255).map((c) => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4))
  return 0.2126 * r! + 0.7152 * g! + 0.0722 * b!
}

function contrast(a: string, b: string): number {
  const [hi, lo] = [luminance(a), luminance(b)].sort((x, y) => y - x)
  return (hi! + 0.05) / (lo! + 0.05)
}

describe('state text contrast (WCAG 2.1, 1.4.3)', () => {
  it('computes the known pairs', () => {
    expect(contrast('#000000', '#FFFFFF')).toBeCloseTo(21, 9)
    expect(contrast('#767676', '#FFFFFF')).toBeCloseTo(4.54, 2)
  })
  it('keeps every tone at 4.5:1 or more on white, paper and the selected row', () => {
    for (const [tone, colour] of Object.entries(TONE_TEXT)) {
      for (const surface of LIGHT_SURFACES) expect(contrast(colour, surface), `${tone} on ${surface}`).toBeGreaterThanOrEqual(4.5)
    }
  })
})
