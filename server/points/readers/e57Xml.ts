import { XMLParser } from 'fast-xml-parser'
import { ScanFormatError } from './errors'

/**
 * E57's XML section as a tree of typed elements (ASTM E2807: Structure, Vector, CompressedVector, Integer,
 * ScaledInteger, Float, String, Blob). Parsed by fast-xml-parser with entity processing off; a DOCTYPE
 * (and so any entity declaration) is refused before parsing, and the section is capped in size.
 * Paths are the standard's element paths: `/data3D/0/points/prototype/cartesianX` (a Vector's children by
 * index). Errors start `XML path <path>: ...`.
 */

export const DEFAULT_MAX_XML_BYTES = 64 * 1024 * 1024

export type E57Type = 'Structure' | 'Vector' | 'CompressedVector' | 'Integer' | 'ScaledInteger' | 'Float' | 'String' | 'Blob'
const TYPES: readonly string[] = ['Structure', 'Vector', 'CompressedVector', 'Integer', 'ScaledInteger', 'Float', 'String', 'Blob']

export interface E57Element {
  name: string
  path: string
  type: E57Type
  attrs: Record<string, string>
  children: E57Element[]
  text: string
}

export function errorAtPath(path: string, message: string): ScanFormatError {
  return new ScanFormatError(`XML path ${path}: ${message}`, { field: path })
}

type Ordered = Record<string, unknown> & { ':@'?: Record<string, string> }

export function parseE57Xml(text: string): E57Element {
  // Neither DTDs nor entities: the standard's XML has neither, and refusing them shuts out entity expansion.
  const doctype = /<!(DOCTYPE|ENTITY)/i.exec(text)
  if (doctype) throw errorAtPath('/', `the XML section holds a <!${doctype[1]} declaration at character ${doctype.index}; E57's XML has none and Spanmark does not read them`)
  let parsed: Ordered[]
  try {
    const parser = new XMLParser({
      preserveOrder: true,
      ignoreAttributes: false,
      attributeNamePrefix: '',
      processEntities: false,
      htmlEntities: false,
      parseTagValue: false,
      parseAttributeValue: false,
      trimValues: true,
      ignoreDeclaration: true,
      ignorePiTags: true,
      // E57's XML nests about eight deep; deeper is refused by the parser.
      maxNestedTags: 32,
      // E57 names an element `prototype`, which the parser refuses as an object key: every tag gets a prefix
      // (taken off again in elementName), so no element name is ever a property of Object.prototype.
      transformTagName: (name: string) => `${TAG_PREFIX}${name}`,
    })
    // `true`: run the parser's validator first, so malformed XML is refused rather than half read.
    parsed = parser.parse(text, true) as Ordered[]
  } catch (error) {
    const detail = error instanceof Error ? error.message : String(error)
    throw errorAtPath('/', `the XML section is not well-formed XML (${detail})`)
  }
  const roots = parsed.filter((n) => elementName(n) !== null)
  const root = roots[0]
  if (!root || elementName(root) !== 'e57Root') throw errorAtPath('/', `the XML section's root element is '${root ? elementName(root) : 'none'}', not 'e57Root'`)
  return build(root, '')
}

const TAG_PREFIX = 'e57:'

function elementKey(node: Ordered): string | null {
  for (const key of Object.keys(node)) if (key.startsWith(TAG_PREFIX)) return key
  return null
}

function elementName(node: Ordered): string | null {
  let key = elementKey(node)
  if (key === null) return null
  // The parser applies the transform twice to some self-closing tags.
  while (key.startsWith(TAG_PREFIX)) key = key.slice(TAG_PREFIX.length)
  return key
}

function build(node: Ordered, parentPath: string, index?: number): E57Element {
  const name = elementName(node) as string
  const path = parentPath === '' && name === 'e57Root' ? '' : `${parentPath}/${index ?? name}`
  const attrs = (node[':@'] ?? {}) as Record<string, string>
  const type = attrs.type
  const shown = path === '' ? '/' : path
  if (!type || !TYPES.includes(type)) throw errorAtPath(shown, type ? `element type '${type}' is not one of ASTM E2807's (${TYPES.join(', ')})` : "element has no 'type' attribute")
  const raw = (node[elementKey(node) as string] ?? []) as Ordered[]
  const element: E57Element = { name, path, type: type as E57Type, attrs, children: [], text: '' }
  const vector = type === 'Vector'
  for (const child of raw) {
    if ('#text' in child) {
      element.text += String(child['#text'])
      continue
    }
    if (elementName(child) === null) continue
    element.children.push(build(child, path, vector ? element.children.length : undefined))
  }
  element.text = element.text.trim()
  return element
}

export function shownPath(element: E57Element): string {
  return element.path === '' ? '/' : element.path
}

export function child(element: E57Element, name: string): E57Element | undefined {
  return element.children.find((c) => c.name === name)
}

export function requireChild(element: E57Element, name: string, type?: E57Type | E57Type[]): E57Element {
  const found = child(element, name)
  if (!found) throw errorAtPath(`${element.path}/${name}`, `required element is missing`)
  if (type) expectType(found, type)
  return found
}

export function expectType(element: E57Element, type: E57Type | E57Type[]): void {
  const allowed = Array.isArray(type) ? type : [type]
  if (!allowed.includes(element.type)) throw errorAtPath(shownPath(element), `is of type ${element.type}, expected ${allowed.join(' or ')}`)
}

function parseNumber(element: E57Element, raw: string, what: string): number {
  const v = Number(raw)
  if (raw.trim() === '' || !Number.isFinite(v)) throw errorAtPath(shownPath(element), `${what} '${raw}' is not a number`)
  return v
}

/** An attribute as a number, or `fallback` when absent. */
export function numberAttr(element: E57Element, name: string, fallback: number): number {
  const raw = element.attrs[name]
  return raw === undefined ? fallback : parseNumber(element, raw, `attribute ${name}`)
}

/** The value of an Integer, ScaledInteger (scaled) or Float element; an empty element is 0 (the standard's default). */
export function numberValue(element: E57Element): number {
  expectType(element, ['Integer', 'ScaledInteger', 'Float'])
  const raw = element.text === '' ? 0 : parseNumber(element, element.text, 'value')
  if (element.type === 'ScaledInteger') return raw * numberAttr(element, 'scale', 1) + numberAttr(element, 'offset', 0)
  return raw
}

export function optionalNumber(element: E57Element, name: string): number | undefined {
  const found = child(element, name)
  return found ? numberValue(found) : undefined
}

export function stringValue(element: E57Element | undefined): string | null {
  if (!element || element.type !== 'String') return null
  return element.text
}
