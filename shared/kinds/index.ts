import { z } from 'zod'
import { angle } from './angle'
import { clearance } from './clearance'
import { distance } from './distance'
import { pointToPlane } from './pointToPlane'
import { section } from './section'
import { size } from './size'

/**
 * The marker kinds, one module each (shared/kinds/<kind>/: params, create body, result, words). The API's
 * kind list, the create body's and the check result's discriminated unions are built from this one list; the
 * server's checks (server/markers/kinds/) and the client's tools (app/kinds/) keep their own registries keyed
 * by these kinds. Adding a kind: DEVELOPERS.md, "Adding things": a marker kind.
 */
export const KINDS = [distance, angle, section, clearance, pointToPlane, size] as const

type Kinds = typeof KINDS
type Kind = Kinds[number]
/** Tuple maps (generic, so the tuple shape is kept): the kinds' create and result schemas, in list order. */
type CreatesOf<T> = { -readonly [I in keyof T]: T[I] extends { create: infer C } ? C : never }
type ResultsOf<T> = { -readonly [I in keyof T]: T[I] extends { result: infer R } ? R : never }

export type MarkerKind = Kind['kind']
export const MARKER_KINDS = KINDS.map((k) => k.kind) as [MarkerKind, ...MarkerKind[]]

const BY_KIND = new Map<string, Kind>(KINDS.map((k) => [k.kind, k]))
/** The kind's module (words, unit, schemas). */
export function kindSpec<K extends MarkerKind>(kind: K): Extract<Kind, { kind: K }> {
  return BY_KIND.get(kind) as Extract<Kind, { kind: K }>
}

/** The kind in words ("distance", "point to plane"). */
export const kindWord = (kind: MarkerKind): string => BY_KIND.get(kind)?.word ?? kind

/** The most anchors any kind's marker holds. */
export const MAX_ANCHORS = Math.max(...KINDS.map((k) => k.maxAnchors))

export const MarkerCreateBody = z.discriminatedUnion('kind', KINDS.map((k) => k.create) as unknown as CreatesOf<Kinds>, {
  error: `kind must be one of ${MARKER_KINDS.join(', ')}`,
})
export type MarkerCreateBody = z.infer<typeof MarkerCreateBody>

/** A check's kind-specific result: one object per kind, told apart by `kind`. */
export const KindResult = z.discriminatedUnion('kind', KINDS.map((k) => k.result) as unknown as ResultsOf<Kinds>)
export type KindResult = z.infer<typeof KindResult>
export type KindResultOf<K extends MarkerKind> = Extract<KindResult, { kind: K }>

/** Markers of which kinds, through which params, depend on another marker (a clearance on its section). */
export const DEPENDENT_PARAMS: readonly { kind: MarkerKind; param: string; on: string }[] = KINDS.flatMap((k) =>
  'dependsOn' in k ? k.dependsOn.map((d) => ({ kind: k.kind, param: d.param, on: d.on })) : [],
)

/** Does this param (one id, or a list of ids) name the marker? */
export function namesMarker(params: Record<string, unknown>, param: string, markerId: string): boolean {
  const v = params[param]
  return v === markerId || (Array.isArray(v) && v.includes(markerId))
}

/** Params, by any kind, that name placements (one id or a list). */
export const PLACEMENT_PARAMS: readonly string[] = [...new Set(KINDS.flatMap((k) => ('placementParams' in k ? [...k.placementParams] : [])))]

/** Params of any kind that name an object of the scene (a clearance's or a size's object). */
export const OBJECT_PARAMS: readonly string[] = [...new Set(KINDS.flatMap((k) => ('objectParams' in k ? [...(k.objectParams as readonly string[])] : [])))]

export * from './distance'
export * from './angle'
export * from './section'
export * from './clearance'
