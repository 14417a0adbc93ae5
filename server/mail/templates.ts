import type { OutgoingMail } from '../repositories/mail'

function escape(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!)
}

function html(paragraphs: string[], link: { href: string; label: string }): string {
  const body = paragraphs.map((p) => `<p>${escape(p)}</p>`).join('')
  return `<div style="font-family:'Work Sans',Arial,sans-serif;font-size:14px;color:#2A2622">${body}<p><a href="${escape(link.href)}" style="color:#8F5E0A">${escape(link.label)}</a></p><p style="color:#6F675E">Spanmark</p></div>`
}

export function passwordResetMail(to: string, name: string, link: string, ttlMinutes: number): OutgoingMail {
  const lines = [
    `Hello ${name},`,
    `someone asked to reset the password of the Spanmark account for ${to}. The link below sets a new one; it works once, for ${ttlMinutes} minutes.`,
    'If this was not you, ignore this message: your password stays as it is.',
  ]
  return {
    to,
    subject: 'Reset your Spanmark password',
    text: `${lines.join('\n\n')}\n\n${link}\n\nSpanmark`,
    html: html(lines, { href: link, label: 'Set a new password' }),
  }
}

export function passwordChangedMail(to: string, name: string): OutgoingMail {
  const text = `Hello ${name},\n\nthe password of your Spanmark account was just changed, and every other session was signed out. If this was not you, reset the password at once and tell your project's owner.\n\nSpanmark`
  return { to, subject: 'Your Spanmark password was changed', text }
}

const ROLE_WORDS: Record<'measurer' | 'mentor', string> = {
  measurer: 'a measurer (bring scans in, place them, and measure)',
  mentor: 'a mentor (review: comment, ask for changes and sign measurements off)',
}

export function inviteMail(to: string, v: { inviter: string; projectName: string; role: 'measurer' | 'mentor'; link: string; expiresAt: Date }): OutgoingMail {
  const lines = [
    `Hello,`,
    `${v.inviter} invites you to the Spanmark project "${v.projectName}" as ${ROLE_WORDS[v.role]}.`,
    `The link below works once, until ${v.expiresAt.toUTCString()}. If you have no Spanmark account for ${to} yet, you make one on the way; if you do, you sign in with it.`,
    'If you did not expect this, ignore this message: nothing happens until the link is used.',
  ]
  return {
    to,
    subject: `${v.inviter} invites you to "${v.projectName}" on Spanmark`,
    text: `${lines.join('\n\n')}\n\n${v.link}\n\nSpanmark`,
    html: html(lines, { href: v.link, label: 'Join the project' }),
  }
}

export function passMail(to: string, v: { name: string; sender: string; projectName: string; link: string; expiresAt: Date }): OutgoingMail {
  const lines = [
    `Hello ${v.name},`,
    `${v.sender} sends you a viewing pass for the Spanmark project "${v.projectName}": its scenes, measurements and their checks, read-only, in your browser. No account or install is needed.`,
    `The link below opens it in one browser, once; that browser then keeps the pass until ${v.expiresAt.toUTCString()}, unless it is withdrawn sooner. Do not forward this message: whoever opens the link first holds the pass.`,
  ]
  return {
    to,
    subject: `A viewing pass for "${v.projectName}" on Spanmark`,
    text: `${lines.join('\n\n')}\n\n${v.link}\n\nSpanmark`,
    html: html(lines, { href: v.link, label: 'Open the viewing pass' }),
  }
}
