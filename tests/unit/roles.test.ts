// The role table of shared/auth/roles.ts against the product's capability table (DEVELOPERS.md, "Roles and rights"), written out
// here row by row (the product's own specification, not derived from the code under test).
import { describe, expect, it } from 'vitest'
import { can, RIGHTS, ROLES, type Right, type Role } from '@shared/auth/roles'

const ROLES_AND_RIGHTS: Record<Right, Record<Role, boolean>> = {
  view: { owner: true, measurer: true, mentor: true, guest: true },
  // Seeing is not taking: a guest downloads original scans only through a pass that allows it (issue 12, point 8).
  downloadOriginals: { owner: true, measurer: true, mentor: true, guest: false },
  editScans: { owner: true, measurer: true, mentor: false, guest: false },
  editMarkers: { owner: true, measurer: true, mentor: false, guest: false },
  comment: { owner: true, measurer: true, mentor: true, guest: false },
  review: { owner: true, measurer: false, mentor: true, guest: false },
  manage: { owner: true, measurer: false, mentor: false, guest: false },
  deleteProject: { owner: true, measurer: false, mentor: false, guest: false },
}

describe('roles and rights', () => {
  for (const right of RIGHTS) {
    for (const role of ROLES) {
      it(`${role} ${ROLES_AND_RIGHTS[right][role] ? 'may' : 'may not'} ${right}`, () => {
        expect(can(role, right)).toBe(ROLES_AND_RIGHTS[right][role])
      })
    }
  }
  it('grants nothing without a role', () => {
    expect(can(null, 'view')).toBe(false)
  })
})
