const dateFormat = new Intl.DateTimeFormat(undefined, { year: 'numeric', month: 'short', day: 'numeric' })
const dateTimeFormat = new Intl.DateTimeFormat(undefined, {
  year: 'numeric',
  month: 'short',
  day: 'numeric',
  hour: '2-digit',
  minute: '2-digit',
  second: '2-digit',
})

export function formatDate(iso: string): string {
  return dateFormat.format(new Date(iso))
}

export function formatDateTime(iso: string): string {
  return dateTimeFormat.format(new Date(iso))
}

/** "1 member", "3 members". */
export function countOf(n: number, one: string, many = `${one}s`): string {
  return `${n} ${n === 1 ? one : many}`
}

/** Up to two initials for an avatar. */
export function initialsOf(name: string): string {
  const parts = name.trim().split(/\s+/).filter(Boolean)
  const first = parts[0]?.charAt(0) ?? ''
  const last = parts.length > 1 ? (parts[parts.length - 1]?.charAt(0) ?? '') : ''
  return (first + last).toUpperCase() || '?'
}

const countFormat = new Intl.NumberFormat(undefined, { maximumFractionDigits: 0 })

/** A whole count with the reader's thousands separators: "357,543". */
export function formatCount(n: number): string {
  return countFormat.format(n)
}

const sizeFormat = new Intl.NumberFormat(undefined, { minimumFractionDigits: 1, maximumFractionDigits: 1 })
const SIZE_UNITS = ['KiB', 'MiB', 'GiB', 'TiB'] as const

/** A file size in binary units, as the server states its limit: "812 B", "9.5 MiB", "2.0 GiB". */
export function formatBytes(bytes: number): string {
  if (bytes < 1024) return `${countFormat.format(bytes)}\u00a0B`
  let value = bytes / 1024
  let unit = 0
  while (value >= 1024 && unit < SIZE_UNITS.length - 1) {
    value /= 1024
    unit++
  }
  return `${sizeFormat.format(value)}\u00a0${SIZE_UNITS[unit]}`
}

const percentFormats = [0, 1].map((digits) => new Intl.NumberFormat(undefined, { style: 'percent', maximumFractionDigits: digits }))

/** A share as a percentage: 0.0529 -> "5.3%", or "5%" with no decimals (the reader's locale places the sign). */
export function formatPercent(share: number, digits: 0 | 1 = 1): string {
  return percentFormats[digits]!.format(share)
}
