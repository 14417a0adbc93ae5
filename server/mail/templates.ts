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
