export type TextPart = { kind: 'text'; text: string } | { kind: 'link'; href: string }

const URL_PATTERN = /(https?:\/\/[^\s<>"')\]]+)/g

/** Splits plain text into text and http(s) links, so links render as anchors without any HTML injection. */
export function linkify(text: string): TextPart[] {
  const parts: TextPart[] = []
  let last = 0
  for (const match of text.matchAll(URL_PATTERN)) {
    const start = match.index
    if (start > last) parts.push({ kind: 'text', text: text.slice(last, start) })
    parts.push({ kind: 'link', href: match[0] })
    last = start + match[0].length
  }
  if (last < text.length) parts.push({ kind: 'text', text: text.slice(last) })
  return parts
}
