// The after-sign-in redirect takes same-site paths only. The open-redirect forms below are the usual
// ones: protocol-relative '//host', the backslash that browsers read as a slash (WHATWG URL standard,
// "special" schemes), absolute URLs and control characters (common practice, no source).
import { describe, expect, it } from 'vitest'
import { safeRedirect } from '@/router/redirect'

describe('safe redirect after sign-in', () => {
  it('keeps same-site paths with their query and fragment', () => {
    expect(safeRedirect('/projects/abc?tab=scans#x')).toBe('/projects/abc?tab=scans#x')
    expect(safeRedirect(['/account', '/other'])).toBe('/account')
  })
  it('refuses other hosts, schemes, control characters and the auth pages themselves', () => {
    for (const bad of ['//evil.example/x', '/\\evil.example', 'https://evil.example', 'javascript:alert(1)', '/pro\u0000jects', '/sign-in', '/reset-password?x=1', '', undefined, null]) {
      expect(safeRedirect(bad as string | undefined), String(bad)).toBeNull()
    }
    // WHATWG URL parsing: what the refused forms would have meant in a browser.
    expect(new URL('//evil.example/x', 'http://127.0.0.1:5480').host).toBe('evil.example')
    expect(new URL('/\\evil.example', 'http://127.0.0.1:5480').host).toBe('evil.example')
  })
})
