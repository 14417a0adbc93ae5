import type { Component } from 'vue'
import type { LengthUnit } from '@shared/format/units'
import type { Instance, Marker, MarkerCreateBody, MarkerKind, SceneObject } from '@shared/schemas'
import type { IconSource } from '@/components/base/icons'
import type { Fact } from '@/components/markers/markerFacts'
import type { MarkerFigureData } from '@/components/markers/markerFigure'
import type { Picked } from '@/components/viewer/markerPlacing'
import type { MarkerStroke, MarkerView } from '@/viewer/markerLayer'
import type { Vec3 } from '@/viewer/types'

/** A figure a kind draws with a component of its own (a size's box from above and from the side); the unit is added to its props. */
export interface KindFigure {
  component: Component
  props: Record<string, unknown>
}

/** What a kind draws in the viewport besides its anchors' dots (app/components/viewer/markerViews.ts adds those and the label). */
export interface KindDrawing {
  strokes: MarkerStroke[]
  fill?: MarkerView['fill']
  /** Where the label stands (null: the anchors' centre). */
  at: Vec3 | null
  /** A flat shape (a plane's rectangle, a silhouette): the label stands above its top. */
  flat?: boolean
}

/** What the placing panel of the active kind is handed: the page's marker tools and the scene around them. */
export interface PlacingContext {
  /** The marker tools (app/composables/useMarkerTools.ts): clicks so far, the kind's options, save and cancel. */
  tools: {
    hint: string
    count: number
    needed: number
    ready: boolean
    problem: string | null
    preview: string | null
    saving: boolean
    error: string | null
    picks: readonly Picked[]
    options: Record<string, unknown>
    save(body: MarkerCreateBody): Promise<Marker | null>
    cancel(): void
  }
  unit: LengthUnit
  placements: Instance[]
  /** The scene's objects (the things to be moved, made of trimmed placements). */
  objects: readonly SceneObject[]
  markers: Marker[]
  /** The project's required margin, metres. */
  requiredMargin: number
  /** The placement most likely to be measured (the rail's selection, else the smallest scan). */
  likelyPlacementId: string | null
}

/** Card context: the other markers of the scene and its placements. */
export interface CardContext {
  markers: readonly Marker[]
  instances: readonly Instance[]
  /** The scene's objects, when the page has them (a clearance names one). */
  objects?: readonly SceneObject[]
  unit: LengthUnit
}

/**
 * The client's side of one marker kind (app/kinds/<kind>/index.ts): its words, icon and colour, its tool in
 * the dock and how it is placed, how it is drawn in the viewport, and how its card reads. Registered in
 * app/kinds/index.ts. Adding a kind: DEVELOPERS.md, "Adding things": a marker kind.
 */
export interface MarkerKindUi<K extends MarkerKind = MarkerKind> {
  kind: K
  /** The panel's title ("Distance"); the kind's word is the shared one (`kindWord`, shared/kinds). */
  title: string
  icon: IconSource
  /** Viewport colour (bright, for the charcoal viewport and chips). */
  colour: string
  tool: {
    /** The tool's id on the page (and its data-testid `tool-<id>`); unique among the viewer's tools. */
    id: string
    /** Its one-letter key (Spanmark's own scheme: see app/components/viewer/viewerTools.ts). */
    key: string
    /** The dock button's words. */
    label: string
  }
  /** The tool's own options (a section's plane and thickness), made fresh when the page opens. */
  options?(): Record<string, unknown>
  /** Options whose change starts the clicks over (a section's plane). */
  restartOn?: readonly string[]
  /** Clicks on the points the marker takes with these options (0: its panel only). */
  clicks(options: Record<string, unknown>): number
  /** What to click next. */
  hint(count: number, options: Record<string, unknown>): string
  /** Why these clicks cannot make a marker (before it is sent), or null. */
  problem?(picks: readonly Picked[], options: Record<string, unknown>): string | null
  /** The live value while placing, from the clicks and the cursor (`u`: each point's standard uncertainty). */
  preview?(points: readonly Vec3[], u: readonly number[], unit: LengthUnit): string | null
  /** Kinds made by clicks alone: the body once the last click is in (saved at once). Others save from their panel. */
  bodyOf?(picks: readonly Picked[], options: Record<string, unknown>): MarkerCreateBody
  /** The placing panel (default: the clicks panel with the hint and the preview), and its props and listeners. */
  panel?: { component: Component; bind(ctx: PlacingContext, ui: MarkerKindUi): Record<string, unknown> }
  /** Drawn in the viewport (`points`: the anchors where they are drawn). */
  draw(marker: Marker, points: readonly Vec3[], colour: string): KindDrawing
  /** The marker being placed, dashed (default: a dashed line through the points). */
  drawPreview?(points: readonly Vec3[], colour: string): KindDrawing
  /** Words before the label's value ("margin "). */
  labelPrefix?(marker: Marker): string
  /** What the value is, for the card's caption ("distance between the anchors"). */
  caption(marker: Marker): string
  /** The card's facts under the value. */
  facts?(marker: Marker, ctx: CardContext): Fact[]
  /** A figure under the facts: a plane figure (sections and clearances) or the kind's own (`KindFigure`). */
  figure?(marker: Marker, ctx: CardContext): MarkerFigureData | KindFigure | null
  /** A note under the value (an angle near 0 or 180 degrees). */
  note?(marker: Marker): string | null
  /** The words of a checked marker with no anchors to be on the points (sections, clearances). */
  checkedWords?: string
  /** Each anchor's name in the parts table (an angle's arms and vertex). */
  anchorNames?: readonly string[]
  /** A caution shown on the card (a clearance's), with its props. */
  caution?: { component: Component; props(marker: Marker): Record<string, unknown> }
  /** Markers of the scene measured through this one (clearances through a section): named before it is deleted. */
  dependents?(marker: Marker, markers: readonly Marker[]): Marker[]
}
