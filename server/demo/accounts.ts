import type { Role } from '@shared/auth/roles'

/**
 * The demo scenario (invented): the small Tidewater Lantern Museum in the fictional harbour town of
 * Ostrevale must move its restored chart chest into the upper gallery through the west loading door.
 */
export const DEMO_PASSWORD = 'lantern-demo-2026'

export const DEMO_ACCOUNTS: readonly { role: Role; email: string; name: string }[] = [
  { role: 'owner', email: 'ines@ostrevale-museum.example', name: 'Ines Calloway' },
  { role: 'measurer', email: 'tomas@ostrevale-museum.example', name: 'Tomas Reyne' },
  { role: 'mentor', email: 'maren@ostrevale-museum.example', name: 'Maren Holt' },
]

/**
 * The demo's guest has no account (DEVELOPERS.md, "Roles and rights"): the owner has sent them a viewing pass, whose e-mail
 * waits in the dev mailbox. Its link opens once, in one browser.
 */
export const DEMO_GUEST = { email: 'pieter@ostrevale-museum.example', name: 'Pieter Ovaska', days: 90, allowDownload: false }

export const DEMO_PROJECT = {
  name: 'Chart chest through the west loading door',
  description:
    'The restored chart chest must reach the upper gallery through the west loading door. The door is scanned from two stations and the chest on its own; the question is whether it passes, turned how, and with what margin.',
}
