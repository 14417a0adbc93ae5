/**
 * Roles and rights per project (the table in DEVELOPERS.md, "Roles and rights"). The server decides every request from this one table;
 * the client uses it only to hide controls a role cannot use.
 */
export const ROLES = ['owner', 'measurer', 'mentor', 'guest'] as const
export type Role = (typeof ROLES)[number]

/** Roles a person with an account holds; a guest has no account, only a viewing pass. */
export const MEMBER_ROLES = ['owner', 'measurer', 'mentor'] as const satisfies readonly Role[]
export type MemberRole = (typeof MEMBER_ROLES)[number]

export const RIGHTS = [
  'view', // scenes, markers, values, history, the measurement sheet
  'downloadOriginals', // take the original scan files away (a guest only when the owner allowed it on the pass)
  'editScans', // upload scans, place and move scans in a scene, align stations
  'editMarkers', // create, edit, delete markers
  'comment', // comment on markers
  'review', // ask for changes, sign off (never one's own marker)
  'manage', // invite people, change roles, issue and revoke viewing passes, rename the project
  'deleteProject',
] as const
export type Right = (typeof RIGHTS)[number]

const TABLE: Record<Role, readonly Right[]> = {
  owner: ['view', 'downloadOriginals', 'editScans', 'editMarkers', 'comment', 'review', 'manage', 'deleteProject'],
  measurer: ['view', 'downloadOriginals', 'editScans', 'editMarkers', 'comment'],
  mentor: ['view', 'downloadOriginals', 'comment', 'review'],
  guest: ['view'],
}

export function can(role: Role | null | undefined, right: Right): boolean {
  return role != null && TABLE[role].includes(right)
}

export function rightsOf(role: Role): readonly Right[] {
  return TABLE[role]
}

/** What the screen calls each role. */
export const ROLE_LABELS: Record<Role, string> = {
  owner: 'Owner',
  measurer: 'Measurer',
  mentor: 'Mentor',
  guest: 'Guest',
}

export const ROLE_DESCRIPTIONS: Record<Role, string> = {
  owner: 'Runs the project: everything a measurer and a mentor do, plus people, passes and deletion.',
  measurer: 'Brings scans in, places them, and measures.',
  mentor: 'Reviews: comments, asks for changes and signs measurements off.',
  guest: 'Holds a viewing pass, no account: sees scenes, values and the measurement sheet; changes nothing.',
}
