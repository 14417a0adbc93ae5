/**
 * Shapes the viewer shares with the page. Units: metres; frames: the scene frame (right-handed, Z up) unless a
 * name says `scan` (a scan's own frame). Matrices: 16 numbers, column-major, rigid.
 */
import type { Hierarchy } from '@shared/schemas'

export type Vec3 = [number, number, number]

/** What a placement's points are coloured by. `rgb` falls back to intensity, then to the placement colour. */
export type ColorMode = 'rgb' | 'intensity' | 'height' | 'placement'

/** One placement as the viewer draws it. */
export interface InstanceSpec {
  id: string
  scanId: string
  matrix: readonly number[]
  visible: boolean
  /** '#rrggbb' */
  color: string
}

export interface NearestPoint {
  x: number
  y: number
  z: number
  distance: number
}

/** Where the viewer gets its data from; api/points.ts implements it over the Spanmark API. */
export interface PointSource {
  hierarchy(scanId: string, signal?: AbortSignal): Promise<Hierarchy>
  /** The tile's bytes (shared/points/tileFormat.ts). */
  tile(scanId: string, nodeKey: string, signal?: AbortSignal): Promise<Uint8Array>
  /** The nearest full-resolution stored point to a point in the scan's own frame. */
  nearest(scanId: string, scanPoint: Vec3, signal?: AbortSignal): Promise<NearestPoint | null>
}

/** A picked stored point. */
export interface PickResult {
  instanceId: string
  scanId: string
  /** Scene frame. */
  point: Vec3
  /** The same point in the scan's own frame. */
  scanPoint: Vec3
  /** True once the server's full-resolution search confirmed (or moved) it; false while only the loaded tiles say so. */
  refined: boolean
  /** From the cursor to the point's image, CSS pixels. */
  pixelDistance: number
  /** From the camera along the view ray, metres. */
  depth: number
}

/** A clipping slab: points within thickness / 2 of the plane through `point` with unit `normal` stay. */
export interface SectionSlab {
  point: Vec3
  normal: Vec3
  thickness: number
}

export type InstanceStatus = 'loading' | 'waiting' | 'ready' | 'empty' | 'failed'

export interface ViewerStats {
  pointsDrawn: number
  drawLimit: number
  /** Tiles held in the cache (decoded and on the GPU). */
  tilesLoaded: number
  /** Tiles wanted by the current view and not loaded yet (waiting or in flight). */
  tilesPending: number
  /** Milliseconds from the viewer's creation to the first frame that drew points; null until then. */
  firstFrameMs: number | null
  /** Frames rendered so far (the viewer renders on demand). */
  frames: number
  cacheBytes: number
}

export type GizmoMode = 'translate' | 'rotate'

export interface ViewerEvents {
  /** A click on the points (already refined when the server answered). */
  pick: PickResult
  /** Where a click would land, or null (throttled; from the loaded tiles only). */
  hover: PickResult | null
  'instance-status': { instanceId: string; status: InstanceStatus; message?: string }
  /** The gizmo moved a placement; `final` once, on release. */
  'placement-change': { instanceId: string; matrix: number[]; final: boolean }
  'walk-change': boolean
  'profile-change': boolean
  /** A marker's label was clicked: its id. */
  'marker-select': string
  /** A click in 'screen' click mode (an outline's corner): CSS pixels from the canvas's top left. */
  'screen-click': { x: number; y: number }
  /** The box trim being drawn was dragged by its handles (`final` once, on release); scene frame. */
  'trim-box-change': { shape: { centre: Vec3; size: Vec3; rotation: [number, number, number, number] }; final: boolean }
}
