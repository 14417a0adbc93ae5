/**
 * Words and numbers of the registration report (the measurement sheet's "Registration" section). Pure,
 * unit-tested. Matrices are column-major (shared/geometry/rigidTransform.ts); angles follow
 * describeTransform's X-then-Y-then-Z convention (shared/measure/registration.ts).
 */
import { describeTransform } from '@shared/measure/registration'
import { formatDegrees, formatLength, type LengthUnit } from '@shared/format/units'
import type { PlacementRegistration, Registration } from '@shared/schemas'
import { RMS_SOURCE_WORDS } from '@/components/viewer/alignWords'
import { smallLength } from '@/components/viewer/alignPairs'

/** The placement's state in a sentence; `referenceFor` names the placements aligned onto it. */
export function placementStatus(p: PlacementRegistration, reg: Registration | undefined, referenceFor: readonly string[] = []): string {
  if (!reg && !p.movedSince && referenceFor.length) return `the reference: ${referenceFor.map((n) => `“${n}”`).join(', ')} ${referenceFor.length === 1 ? 'is' : 'are'} aligned onto it`
  if (reg) return `aligned onto “${reg.heldName}” by ${reg.pairs.length ? `${reg.pairs.filter((x) => x.enabled).length} tie pairs` : 'ICP alone'}${reg.refine?.status === 'done' ? (reg.pairs.length ? ' and ICP' : '') : ''}`
  if (p.movedSince) return 'it or the placement it was aligned onto moved since its registration: counts as not aligned'
  return 'not aligned (a reference, or placed by hand)'
}

/** The RMS with the figure it is, e.g. "1.2 mm (check points)". */
export function rmsText(rms: number | null, source: Registration['rmsSource'], unit: LengthUnit): string {
  if (rms === null || !source) return '—'
  return `${smallLength(rms, unit)} (${RMS_SOURCE_WORDS[source]})`
}

/** The 4 x 4 matrix by rows, rotation to 6 decimals, translation in the reader's unit. */
export function matrixRows(m: readonly number[], unit: LengthUnit): string[][] {
  const rows: string[][] = []
  for (let r = 0; r < 4; r++) {
    const row: string[] = []
    for (let c = 0; c < 4; c++) {
      const v = m[4 * c + r]!
      row.push(c === 3 && r < 3 ? formatLength(v, unit) : (v + 0).toFixed(6))
    }
    rows.push(row)
  }
  return rows
}

/** Translation and the three angles, in words; null for a matrix that is not rigid. */
export function transformText(m: readonly number[], unit: LengthUnit): { translation: string; rotation: string } | null {
  const d = describeTransform(m)
  if (!d) return null
  const [x, y, z] = d.translation
  const a = d.rotationDegrees
  return {
    translation: `x ${formatLength(x, unit)}, y ${formatLength(y, unit)}, z ${formatLength(z, unit)}`,
    rotation: `about X ${formatDegrees(a.x, 4)}, then Y ${formatDegrees(a.y, 4)}, then Z ${formatDegrees(a.z, 4)}`,
  }
}

/** One line of the record's history. */
export function historyText(r: Registration): string {
  if (r.kind === 'undo') return `undo: “${r.movingName}” set back where it was`
  return `“${r.movingName}” onto “${r.heldName}”${r.state === 'undone' ? ' (undone)' : ''}`
}
