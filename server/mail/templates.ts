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

export function confirmEmailMail(to: string, name: string, link: string, ttlHours: number): OutgoingMail {
  const lines = [
    `Hello ${name},`,
    `welcome to Spanmark. The link below confirms that ${to} is your address and signs you in; it works once, for ${ttlHours} hours.`,
    'If you did not sign up, ignore this message: the account stays unconfirmed and cannot join any project.',
  ]
  return {
    to,
    subject: 'Confirm your address for Spanmark',
    text: `${lines.join('\n\n')}\n\n${link}\n\nSpanmark`,
    html: html(lines, { href: link, label: 'Confirm my address' }),
  }
}

/** To the owner of an address someone tried to sign up with again: no new account was made. */
export function signUpAttemptMail(to: string, name: string, signInLink: string, resetLink: string): OutgoingMail {
  const lines = [
    `Hello ${name},`,
    `someone tried to sign up for Spanmark with your address, ${to}. You already have an account, so nothing was changed.`,
    `If it was you, sign in (${signInLink}) or, if you forgot your password, reset it (${resetLink}).`,
    'If it was not you, ignore this message.',
  ]
  return {
    to,
    subject: 'Someone tried to sign up with your address',
    text: `${lines.join('\n\n')}\n\nSpanmark`,
    html: html(lines, { href: signInLink, label: 'Sign in' }),
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

/** One comment in a digest to a marker's author. */
export interface CommentDigestItem {
  authorName: string | null
  body: string
  at: Date
  reply: boolean
  marker: { id: string; label: string }
  scene: { id: string; name: string }
  project: { id: string; name: string }
}

/** "2 Dec 2026, 10:04 UTC": the mail cannot know the reader's time zone. */
function mailTime(d: Date): string {
  const month = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'][d.getUTCMonth()]
  return `${d.getUTCDate()} ${month} ${d.getUTCFullYear()}, ${String(d.getUTCHours()).padStart(2, '0')}:${String(d.getUTCMinutes()).padStart(2, '0')} UTC`
}

/**
 * Everything others wrote on a person's markers since the last message: grouped by marker, each with who,
 * when, the text, and a link that opens the scene with that marker selected.
 */
export function commentDigestMail(to: string, name: string, items: readonly CommentDigestItem[], origin: string): OutgoingMail {
  const groups = new Map<string, { item: CommentDigestItem; comments: CommentDigestItem[] }>()
  for (const item of items) {
    const group = groups.get(item.marker.id) ?? { item, comments: [] }
    group.comments.push(item)
    groups.set(item.marker.id, group)
  }
  const link = (i: CommentDigestItem) => `${origin}/projects/${i.project.id}/scenes/${i.scene.id}?marker=${i.marker.id}`
  const n = items.length
  const people = [...new Set(items.map((i) => i.authorName ?? 'a former member'))]
  const first = items[0]!
  const subject =
    groups.size === 1
      ? `${people.join(' and ')} commented on “${first.marker.label}”`
      : `${n} new comments on ${groups.size} of your markers`
  const intro = `Hello ${name},\n\n${n === 1 ? 'a comment arrived' : `${n} comments arrived`} on ${groups.size === 1 ? 'a marker' : 'markers'} you placed:`
  const blocks = [...groups.values()].map(({ item, comments }) => {
    const lines = comments.map((c) => `  ${c.authorName ?? 'A former member'}${c.reply ? ' replied' : ''}, ${mailTime(c.at)}:\n${c.body.split('\n').map((l) => `    ${l}`).join('\n')}`)
    return `“${item.marker.label}” in the scene “${item.scene.name}” (${item.project.name})\n${lines.join('\n\n')}\n  Open it: ${link(item)}`
  })
  const text = `${intro}\n\n${blocks.join('\n\n')}\n\nReply in the marker's card. You get at most one such message every few minutes; comments that arrive meanwhile wait for the next.\n\nSpanmark`
  const htmlBlocks = [...groups.values()]
    .map(({ item, comments }) => {
      const list = comments
        .map(
          (c) =>
            `<p style="margin:8px 0 0"><strong>${escape(c.authorName ?? 'A former member')}</strong>${c.reply ? ' replied' : ''} <span style="color:#6F675E">${escape(mailTime(c.at))}</span></p>` +
            `<p style="margin:2px 0 0;white-space:pre-wrap">${escape(c.body)}</p>`,
        )
        .join('')
      return `<div style="margin:16px 0;padding:10px 14px;border-left:3px solid #C98A12;background:#F7F3EC"><p style="margin:0"><strong>“${escape(item.marker.label)}”</strong> in the scene “${escape(item.scene.name)}” <span style="color:#6F675E">(${escape(item.project.name)})</span></p>${list}<p style="margin:10px 0 0"><a href="${escape(link(item))}" style="color:#8F5E0A">Open the marker</a></p></div>`
    })
    .join('')
  const html = `<div style="font-family:'Work Sans',Arial,sans-serif;font-size:14px;color:#2A2622"><p>${escape(`Hello ${name},`)}</p><p>${escape(intro.split('\n\n')[1]!)}</p>${htmlBlocks}<p style="color:#6F675E">Reply in the marker's card. You get at most one such message every few minutes; comments that arrive meanwhile wait for the next.</p><p style="color:#6F675E">Spanmark</p></div>`
  return { to, subject, text, html }
}
