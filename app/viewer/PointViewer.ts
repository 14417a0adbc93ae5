/**
 * Spanmark's scene viewer: several placements of scanned points at true scale, streamed level of detail,
 * picking of stored points, a gizmo for placing, a section slab with a head-on profile view, walking, and the
 * scene's markers drawn over the points (markerLayer.ts).
 *
 * Frames: scene frame in metres, right-handed, Z up (camera.up = +Z). On the GPU everything is in the render
 * frame = scene frame minus the render origin (float64, fixed once: the centre of the first placement whose
 * hierarchy arrives), so float32 positions near the camera keep well under a millimetre. The viewer renders on
 * demand (camera moves, tiles arrive, settings change) from one requestAnimationFrame loop.
 *
 * Level of detail: lodSelect.ts (which nodes), TileRequests.ts (priority order, at most `maxRequests` in
 * flight), TileCache.ts (LRU in bytes). Picking: picking.ts, then the server's nearest stored point.
 */
import * as THREE from 'three'
import { OrbitControls } from 'three/examples/jsm/controls/OrbitControls.js'
import { TransformControls } from 'three/examples/jsm/controls/TransformControls.js'
import type { DecodedTile } from '@shared/points/tileFormat'
import { transformPoint } from '@shared/geometry/rigidTransform'
import { Emitter } from './emitter'
import { FloorGrid } from './floorGrid'
import { MarkerLayer, type MarkerView } from './markerLayer'
import { selectNodes, type LodTree } from './lodSelect'
import { pickPoint, type PickHit, type PickTarget } from './picking'
import { COLOR_MODE_INDEX } from './pointMaterial'
import { ScanTree } from './ScanTree'
import { SceneMark, type MarkKind } from './sceneMarks'
import { SlabOutline, padExtent, slabAxes, slabPlanes, type PlaneExtent } from './sectionSlab'
import { TileCache, entryFromTile, tileKey, type TileEntry } from './TileCache'
import { TileRequests, type TileWant } from './TileRequests'
import { TrimBoxHandles, type BoxHandleKind, type BoxTrimShape } from './trimBoxHandles'
import { TrimOutlines, type TrimOutline } from './trimOutlines'
import type { PlacementTrims } from './trimStates'
import type {
  ColorMode,
  GizmoMode,
  InstanceSpec,
  InstanceStatus,
  PickResult,
  PointSource,
  SectionSlab,
  Vec3,
  ViewerEvents,
  ViewerStats,
} from './types'
import { ViewInstance } from './ViewInstance'
import { WalkControls } from './WalkControls'

export const DEFAULT_DRAW_LIMIT = 3_000_000
export const MIN_DRAW_LIMIT = 1_000
export const MAX_DRAW_LIMIT = 50_000_000
export const DEFAULT_CACHE_BYTES = 512 * 1024 * 1024
export const DEFAULT_MAX_REQUESTS = 4
/** Points whose trim states are computed again per frame after a trim change (1 M took 0.3-0.6 s on the shared 2-core machine). */
export const TRIM_POINTS_PER_FRAME = 200_000
/** A click lands on a stored point whose image is within this many CSS pixels of the cursor. */
export const PICK_TOLERANCE_PX = 6
const HOVER_EVERY_MS = 70
const CLICK_SLOP_PX = 5
const CLICK_MAX_MS = 600
const HIERARCHY_RETRY_MS = 3000
const BACKGROUND = '#1E1B18'

export interface PointViewerOptions {
  source: PointSource
  drawLimit?: number
  cacheBytes?: number
  maxRequests?: number
  /** Point size in CSS pixels. */
  pointSize?: number
  colorMode?: ColorMode
  /** Refine while a node's point spacing on screen is above this many pixels. */
  detailPx?: number
}

interface ScanRecord {
  scanId: string
  tree: ScanTree | null
  status: InstanceStatus
  message?: string
  hasRgb: boolean
  hasIntensity: boolean
  intensityMin: number
  intensityMax: number
  controller: AbortController
  retry: ReturnType<typeof setTimeout> | null
}

interface PointerDown {
  x: number
  y: number
  at: number
  button: number
  onGizmo: boolean
}

function sameMatrix(a: readonly number[], b: readonly number[]): boolean {
  for (let i = 0; i < 16; i++) if (a[i] !== b[i]) return false
  return true
}

export class PointViewer {
  readonly canvas: HTMLCanvasElement
  private renderer: THREE.WebGLRenderer
  private scene = new THREE.Scene()
  private content = new THREE.Group()
  private perspective = new THREE.PerspectiveCamera(50, 1, 0.01, 1000)
  private ortho: THREE.OrthographicCamera | null = null
  private orbit: OrbitControls
  private profileOrbit: OrbitControls | null = null
  private gizmo: TransformControls
  private gizmoMoved = false
  private walk: WalkControls
  private grid = new FloorGrid()
  private slabOutline = new SlabOutline()
  private marks: Record<MarkKind, SceneMark>
  private markerLayer: MarkerLayer
  private trimOutlines: TrimOutlines
  private boxHandles: TrimBoxHandles
  private placementTrims = new Map<string, PlacementTrims>()
  private readonly peopleCursors = new Map<number, SceneMark>()
  private cache: TileCache
  private requests: TileRequests
  private instances = new Map<string, ViewInstance>()
  private scans = new Map<string, ScanRecord>()
  private emitter = new Emitter<ViewerEvents>()
  private source: PointSource
  private origin: Vec3 | null = null
  private sceneBox: THREE.Box3 | null = null
  private limit: number
  private pointSize: number
  private colorMode: ColorMode
  private detailPx: number
  private clickMode: 'pick' | 'screen' | 'none' = 'pick'
  /** Picks and the hover ring only on this placement (the align tool's side being clicked), or on all. */
  private pickOnly: string | null = null
  private slab: SectionSlab | null = null
  private planes: [THREE.Plane, THREE.Plane] = [new THREE.Plane(), new THREE.Plane()]
  private pixelRatio: number
  private width = 1
  private height = 1
  private needsRender = true
  private lodDirty = true
  private pointsDrawn = 0
  private frames = 0
  private firstFrameMs: number | null = null
  private readonly createdAt = performance.now()
  private rafId = 0
  private lastTick = performance.now()
  /** Frames the whole scene as hierarchies arrive, until the user moves the camera. */
  private autoFrame = true
  private lastPickResult: PickResult | null = null
  private pickSeq = 0
  private hoverTimer: ReturnType<typeof setTimeout> | null = null
  private hoverAt: { x: number; y: number } | null = null
  private down: PointerDown | null = null
  private resizeObserver: ResizeObserver
  private disposed = false
  private savedPose: { position: THREE.Vector3; target: THREE.Vector3 } | null = null
  private cutStyle: 'hide' | 'dim' = 'hide'

  constructor(
    private container: HTMLElement,
    options: PointViewerOptions,
  ) {
    this.source = options.source
    this.limit = clampLimit(options.drawLimit ?? DEFAULT_DRAW_LIMIT)
    this.pointSize = options.pointSize ?? 2
    this.colorMode = options.colorMode ?? 'rgb'
    this.detailPx = options.detailPx ?? 1.5
    this.pixelRatio = Math.min(window.devicePixelRatio || 1, 2)

    // preserveDrawingBuffer so tests (and a future "save image") can read the pixels after a frame.
    this.renderer = new THREE.WebGLRenderer({ antialias: false, preserveDrawingBuffer: true, powerPreference: 'high-performance' })
    this.renderer.setPixelRatio(this.pixelRatio)
    this.renderer.setClearColor(BACKGROUND, 1)
    this.renderer.localClippingEnabled = true
    this.canvas = this.renderer.domElement
    this.canvas.style.display = 'block'
    this.canvas.style.outline = 'none'
    this.canvas.tabIndex = 0
    container.appendChild(this.canvas)

    this.perspective.up.set(0, 0, 1)
    this.perspective.position.set(-4, -6, 3)
    this.perspective.lookAt(0, 0, 0)

    this.orbit = this.makeOrbit(this.perspective)
    this.orbit.addEventListener('change', this.onCameraChange)

    this.gizmo = new TransformControls(this.perspective, this.canvas)
    this.gizmo.showE = false
    this.gizmo.size = 0.9
    this.gizmo.addEventListener('change', this.requestRender)
    this.gizmo.addEventListener('dragging-changed', this.onGizmoDragging)
    this.gizmo.addEventListener('objectChange', this.onGizmoMove)

    this.walk = new WalkControls(this.perspective, this.canvas, this.onCameraChange, () => this.setWalking(false))

    this.marks = {
      hover: new SceneMark('hover', this.pixelRatio),
      pick: new SceneMark('pick', this.pixelRatio),
      section: new SceneMark('section', this.pixelRatio),
    }

    this.scene.add(this.grid.object, this.content, this.slabOutline.object, this.gizmo.getHelper())
    for (const mark of Object.values(this.marks)) this.scene.add(mark.object)
    this.markerLayer = new MarkerLayer(container, {
      pixelRatio: this.pixelRatio,
      toRender: (p) => this.sceneToRender(p),
      onSelect: (markerId) => this.emitter.emit('marker-select', markerId),
      requestRender: this.requestRender,
    })
    this.scene.add(this.markerLayer.object)
    this.trimOutlines = new TrimOutlines(
      (p) => this.sceneToRender(p),
      (instanceId) => this.extentOf(instanceId),
    )
    this.boxHandles = new TrimBoxHandles(this.perspective, this.canvas, {
      toRender: (p) => this.sceneToRender(p),
      toScene: (p) => this.renderToScene(p),
      onChange: (shape, final) => this.emitter.emit('trim-box-change', { shape, final }),
      onDragging: (dragging) => {
        const controls = this.profileOrbit ?? this.orbit
        controls.enabled = !dragging && !this.walk.enabled
      },
      requestRender: this.requestRender,
    })
    this.scene.add(this.trimOutlines.object, this.boxHandles.object)

    this.cache = new TileCache(options.cacheBytes ?? DEFAULT_CACHE_BYTES)
    this.requests = new TileRequests(this.source, options.maxRequests ?? DEFAULT_MAX_REQUESTS, this.onTileLoaded, this.onTileFailed)

    this.canvas.addEventListener('pointerdown', this.onPointerDown)
    this.canvas.addEventListener('pointerup', this.onPointerUp)
    this.canvas.addEventListener('pointermove', this.onPointerMove)
    this.canvas.addEventListener('pointerleave', this.onPointerLeave)
    this.canvas.addEventListener('dblclick', this.onDoubleClick)
    this.canvas.addEventListener('wheel', this.onUserCamera, { passive: true })

    this.resizeObserver = new ResizeObserver(() => this.resize())
    this.resizeObserver.observe(container)
    this.resize()
    this.rafId = requestAnimationFrame(this.tick)
  }

  // ---------------------------------------------------------------- public API

  on<K extends keyof ViewerEvents>(event: K, listener: (payload: ViewerEvents[K]) => void): () => void {
    return this.emitter.on(event, listener)
  }

  /** Makes the drawn placements exactly these (added, moved, hidden, recoloured or removed by id). */
  setInstances(specs: readonly InstanceSpec[]): void {
    const seen = new Set<string>()
    for (const spec of specs) {
      seen.add(spec.id)
      let inst = this.instances.get(spec.id)
      if (inst && inst.scanId !== spec.scanId) {
        this.removeInstance(inst)
        inst = undefined
      }
      if (!inst) {
        inst = new ViewInstance(spec)
        this.instances.set(spec.id, inst)
        this.content.add(inst.pivot)
        const record = this.ensureScan(spec.scanId)
        this.attachTree(inst, record)
        continue
      }
      const dragging = this.gizmo.dragging && this.gizmo.object === inst.pivot
      if (!dragging && !sameMatrix(inst.matrix, spec.matrix)) {
        inst.matrix = [...spec.matrix]
        if (this.origin) inst.applyMatrix(this.origin)
      }
      if (inst.visible !== spec.visible) inst.visible = spec.visible
      if (inst.color !== spec.color) {
        inst.color = spec.color
        inst.applyColor()
      }
    }
    for (const inst of [...this.instances.values()]) if (!seen.has(inst.id)) this.removeInstance(inst)
    for (const record of [...this.scans.values()]) {
      if ([...this.instances.values()].some((i) => i.scanId === record.scanId)) continue
      this.dropScan(record)
    }
    this.afterPlacementsChanged()
  }

  get drawLimit(): number {
    return this.limit
  }

  setDrawLimit(points: number): void {
    this.limit = clampLimit(points)
    this.lodDirty = true
  }

  setPointSize(px: number): void {
    this.pointSize = THREE.MathUtils.clamp(px, 1, 12)
    for (const inst of this.instances.values()) inst.material.uniforms.uPointSize.value = this.pointSize * this.pixelRatio
    this.needsRender = true
  }

  setColorMode(mode: ColorMode): void {
    this.colorMode = mode
    for (const inst of this.instances.values()) inst.material.uniforms.uColorMode.value = COLOR_MODE_INDEX[mode]
    this.needsRender = true
  }

  /**
   * 'pick': a click picks a stored point (and emits `pick`), hovering shows where; 'screen': a click emits
   * `screen-click` with where it landed (an outline's corners); 'none': clicks only navigate.
   */
  setClickMode(mode: 'pick' | 'screen' | 'none'): void {
    this.clickMode = mode
    this.markerLayer.setPassive(mode === 'screen')
    if (mode !== 'pick') this.showHover(null)
  }

  /**
   * Each placement's trims to show (scan frame, by placement id): its scene cuts hide or dim their points, the
   * open object's trims light the points they keep. Placements not in the map show every point.
   */
  setPlacementTrims(trims: ReadonlyMap<string, PlacementTrims>): void {
    this.placementTrims = new Map(trims)
    for (const inst of this.instances.values()) inst.setTrims(this.placementTrims.get(inst.id) ?? null)
    // At once: the placements' drawn tiles take their new geometries before the next frame.
    this.updateLod()
  }

  /** A scene cut's points: hidden (the default) or dimmed. */
  setCutStyle(style: 'hide' | 'dim'): void {
    for (const inst of this.instances.values()) inst.material.uniforms.uCutStyle.value = style === 'dim' ? 1 : 0
    this.cutStyle = style
    this.needsRender = true
  }

  /** How many drawn points scene cuts take away, per placement (browser tests). */
  cutPoints(): Record<string, number> {
    const out: Record<string, number> = {}
    for (const inst of this.instances.values()) out[inst.id] = inst.cutCount()
    return out
  }

  /** Trims drawn as outlines (scene frame). */
  setTrimOutlines(trims: readonly TrimOutline[]): void {
    this.trimOutlines.set(trims)
    this.needsRender = true
  }

  /** How many trims are drawn as outlines (browser tests). */
  get trimOutlineCount(): number {
    return this.trimOutlines.count
  }

  /** The outline being drawn on the screen, its corners so far (scene frame). */
  setOutlineDraft(corners: readonly Vec3[]): void {
    this.trimOutlines.setDraft(corners)
    this.needsRender = true
  }

  /** The box trim being drawn, with its handles (`trim-box-change` as they are dragged), or none. */
  editTrimBox(shape: BoxTrimShape | null, kind: BoxHandleKind = 'move', colour?: string): void {
    this.boxHandles.show(shape && this.origin ? shape : null, kind, colour)
    this.needsRender = true
  }

  /** The box trim's handle under the pointer ('X', 'XY', ...), or null (browser tests find a handle this way). */
  get trimHandleHovered(): string | null {
    return this.boxHandles.handle
  }

  /** Where the view turns about (scene frame): a new box starts there. */
  viewCentre(): Vec3 {
    const target = (this.profileOrbit ?? this.orbit).target
    return this.renderToScene(target)
  }

  /** Half the scene's diagonal, metres (a sensible first size for a box). */
  get radius(): number {
    return this.sceneRadius()
  }

  /** Picks (and the hover ring) land only on this placement's points, or (null) on any drawn placement. */
  setPickOnly(instanceId: string | null): void {
    if (instanceId === this.pickOnly) return
    this.pickOnly = instanceId
    this.showHover(null)
  }

  /** Shows a mark at a scene-frame point (the section's first click), or hides it. */
  setMark(kind: 'section' | 'pick', point: Vec3 | null): void {
    this.marks[kind].place(point && this.origin ? this.sceneToRender(point) : null)
    this.needsRender = true
  }

  /** Other people's pointers (scene frame), each a ring in their colour; an empty list clears them. */
  setPeopleCursors(cursors: readonly { id: number; colour: string; name: string; point: Vec3 }[]): void {
    const keep = new Set(cursors.map((c) => c.id))
    for (const [id, mark] of this.peopleCursors) {
      if (keep.has(id)) continue
      this.scene.remove(mark.object)
      mark.dispose()
      this.peopleCursors.delete(id)
    }
    for (const c of cursors) {
      let mark = this.peopleCursors.get(c.id)
      if (!mark) {
        mark = new SceneMark({ color: c.colour, ring: true, size: 18 }, this.pixelRatio)
        this.peopleCursors.set(c.id, mark)
        this.scene.add(mark.object)
      }
      mark.place(this.origin ? this.sceneToRender(c.point) : null)
    }
    this.markerLayer.setPeopleNames(cursors.map((c) => ({ id: c.id, name: c.name, colour: c.colour, at: this.origin ? this.sceneToRender(c.point) : null })))
    this.needsRender = true
  }

  /** How many other people's pointers are drawn (browser tests). */
  get peopleCursorCount(): number {
    return [...this.peopleCursors.values()].filter((m) => m.object.visible).length
  }

  /** Draws exactly these markers (scene frame); see markerLayer.ts. */
  setMarkers(views: readonly MarkerView[]): void {
    this.markerLayer.setMarkers(views)
    this.needsRender = true
  }

  /** The marker being placed (dashed, with its preview value), or null. */
  setMarkerPreview(view: MarkerView | null): void {
    this.markerLayer.setPreview(view)
    this.needsRender = true
  }

  /** Highlights one marker (its strokes wider, its label ringed), or none. */
  setSelectedMarker(markerId: string | null): void {
    this.markerLayer.setSelected(markerId)
    this.needsRender = true
  }

  /**
   * Clicks where a scene-frame point shows on screen: the same pick (and `pick` event) as a click there.
   * For browser tests, which know points by coordinates rather than by pixel. Null when it is off screen or
   * no drawn point lies within the pick tolerance of its image.
   */
  async pickScenePoint(point: Vec3): Promise<PickResult | null> {
    const px = this.project(...point)
    if (!px || px.x < 0 || px.y < 0 || px.x > this.width || px.y > this.height) return null
    const result = await this.pickAt(px.x, px.y)
    if (result && !this.disposed) this.emitter.emit('pick', result)
    return result
  }

  frameAll(): void {
    if (!this.sceneBox || !this.origin) return
    if (this.walk.enabled) this.setWalking(false)
    if (this.ortho) this.leaveProfileView()
    const centre = this.sceneBox.getCenter(new THREE.Vector3()).sub(this.originVector())
    const radius = Math.max(this.sceneBox.getSize(new THREE.Vector3()).length() / 2, 0.05)
    const fov = THREE.MathUtils.degToRad(this.perspective.fov)
    const fit = Math.min(fov, fov * this.perspective.aspect)
    // The bounding sphere of a box is loose for scans (their corners are mostly empty): come a little closer.
    const distance = (radius / Math.sin(fit / 2)) * 0.8
    const direction = new THREE.Vector3(-0.5, -0.85, 0.45).normalize()
    this.perspective.position.copy(centre).addScaledVector(direction, distance)
    this.orbit.target.copy(centre)
    this.orbit.update()
    this.onCameraChange()
  }

  /** Turns the orbit about a scene-frame point from now on. */
  setFocus(point: Vec3): void {
    if (!this.origin) return
    const controls = this.profileOrbit ?? this.orbit
    controls.target.copy(this.sceneToRender(point))
    controls.update()
    this.onCameraChange()
  }

  get section(): SectionSlab | null {
    return this.slab
  }

  /** Clips every placement to the slab (null: no section). */
  setSection(slab: SectionSlab | null): void {
    this.slab = slab ? { point: [...slab.point], normal: [...slab.normal], thickness: slab.thickness } : null
    this.applySection()
    if (!slab && this.ortho) this.leaveProfileView()
  }

  get inProfileView(): boolean {
    return this.ortho !== null
  }

  /** Looks at the section head-on: an orthographic camera along the slab's normal, turning disabled. */
  viewSectionHeadOn(): void {
    if (!this.slab || !this.origin) return
    const { u, v } = slabAxes(this.slab.normal)
    const n = new THREE.Vector3(...this.slab.normal)
    const radius = this.sceneRadius()
    // Frame the points the slab holds (what the profile is about), not the whole scene.
    const extent = padExtent(this.slabExtent() ?? { uMin: -radius, uMax: radius, vMin: -radius, vMax: radius }, 0.08, 0.05)
    const centre = this.sceneToRender(this.slab.point)
      .addScaledVector(u, (extent.uMin + extent.uMax) / 2)
      .addScaledVector(v, (extent.vMin + extent.vMax) / 2)
    const aspect = this.width / Math.max(this.height, 1)
    const halfHeight = Math.max((extent.vMax - extent.vMin) / 2, (extent.uMax - extent.uMin) / 2 / aspect)
    this.enterHeadOn(centre, n, v, halfHeight)
  }

  /**
   * Looks head-on along a scene axis, no perspective (to draw an outline): `toward` is where the camera looks
   * (the current view direction snapped to the nearest of ±X, ±Y, ±Z when left out); the whole scene framed
   * about the current centre of turning. Returns the screen's axes in the scene frame: u to the right, v up,
   * and n = u × v towards the viewer.
   */
  viewAxisHeadOn(toward?: Vec3): { u: Vec3; v: Vec3; n: Vec3; origin: Vec3 } | null {
    if (!this.origin) return null
    const camera = this.camera()
    const look = toward ? new THREE.Vector3(...toward) : camera.getWorldDirection(new THREE.Vector3())
    const axes = [new THREE.Vector3(1, 0, 0), new THREE.Vector3(0, 1, 0), new THREE.Vector3(0, 0, 1)]
    let best = axes[0]!.clone()
    let dot = 0
    for (const a of axes) {
      const d = look.dot(a)
      if (Math.abs(d) > Math.abs(dot)) {
        dot = d
        best = a.clone()
      }
    }
    // n points back at the viewer; up is Z for a side view, and +Y (or -Y looking up) for a plan view.
    const n = best.multiplyScalar(dot > 0 ? -1 : 1)
    const up = Math.abs(n.z) > 0.5 ? new THREE.Vector3(0, n.z > 0 ? 1 : -1, 0) : new THREE.Vector3(0, 0, 1)
    const centre = (this.profileOrbit ?? this.orbit).target.clone()
    this.enterHeadOn(centre, n, up, this.sceneRadius() * 0.9)
    const u = new THREE.Vector3().crossVectors(up, n).normalize()
    return { u: [u.x, u.y, u.z], v: [up.x, up.y, up.z], n: [n.x, n.y, n.z], origin: this.renderToScene(centre) }
  }

  /**
   * Where a click on the screen (CSS pixels) lands on the plane through `point` across the head-on view (scene
   * frame), or null outside a head-on view.
   */
  screenToPlane(x: number, y: number, point: Vec3): Vec3 | null {
    if (!this.ortho || !this.origin) return null
    const camera = this.ortho
    camera.updateMatrixWorld()
    const p = new THREE.Vector3((x / this.width) * 2 - 1, -(y / this.height) * 2 + 1, -1).unproject(camera)
    const n = camera.getWorldDirection(new THREE.Vector3())
    const o = this.sceneToRender(point)
    p.addScaledVector(n, o.clone().sub(p).dot(n))
    return this.renderToScene(p)
  }

  private enterHeadOn(centre: THREE.Vector3, n: THREE.Vector3, up: THREE.Vector3, halfHeight: number): void {
    if (this.walk.enabled) this.setWalking(false)
    if (!this.ortho) this.savedPose = { position: this.perspective.position.clone(), target: this.orbit.target.clone() }
    this.disposeProfile()
    const radius = this.sceneRadius()
    const aspect = this.width / Math.max(this.height, 1)
    const v = up
    const camera = new THREE.OrthographicCamera(-halfHeight * aspect, halfHeight * aspect, halfHeight, -halfHeight, 0.01, radius * 6 + 10)
    // Up must be set before the controls are made: OrbitControls fixes its frame from camera.up.
    camera.up.copy(v)
    camera.position.copy(centre).addScaledVector(n, radius * 3 + 1)
    camera.lookAt(centre)
    camera.updateProjectionMatrix()
    this.ortho = camera
    this.orbit.enabled = false
    const controls = this.makeOrbit(camera)
    controls.enableRotate = false
    controls.target.copy(centre)
    controls.update()
    controls.addEventListener('change', this.onCameraChange)
    this.profileOrbit = controls
    this.gizmo.camera = camera
    this.boxHandles.setCamera(camera)
    this.emitter.emit('profile-change', true)
    this.onCameraChange()
  }

  leaveProfileView(): void {
    if (!this.ortho) return
    this.disposeProfile()
    this.gizmo.camera = this.perspective
    this.boxHandles.setCamera(this.perspective)
    this.orbit.enabled = !this.walk.enabled
    if (this.savedPose) {
      this.perspective.position.copy(this.savedPose.position)
      this.orbit.target.copy(this.savedPose.target)
      this.orbit.update()
    }
    this.emitter.emit('profile-change', false)
    this.onCameraChange()
  }

  get walking(): boolean {
    return this.walk.enabled
  }

  setWalking(on: boolean): void {
    if (on === this.walk.enabled) return
    if (on) {
      if (this.ortho) this.leaveProfileView()
      this.orbit.enabled = false
      this.walk.pace = THREE.MathUtils.clamp(this.sceneRadius() * 0.25, 0.2, 2.5)
      this.walk.start()
    } else {
      this.walk.stop()
      const distance = Math.max(this.perspective.position.distanceTo(this.orbit.target), 0.5)
      this.orbit.target.copy(this.walk.pointAhead(Math.min(distance, this.sceneRadius())))
      this.orbit.enabled = !this.gizmo.dragging
      this.orbit.update()
    }
    this.gizmo.enabled = !on
    this.boxHandles.setEnabled(!on)
    this.emitter.emit('walk-change', on)
    this.onCameraChange()
  }

  /** Shows the gizmo on one placement (editors), or hides it. */
  setGizmo(instanceId: string | null, mode: GizmoMode = 'translate'): void {
    const inst = instanceId ? this.instances.get(instanceId) : undefined
    if (!inst || !this.origin) {
      if (this.gizmo.object) this.gizmo.detach()
    } else {
      if (this.gizmo.object !== inst.pivot) this.gizmo.attach(inst.pivot)
      this.gizmo.setMode(mode)
      // Rotation about the scene's own axes only (no screen-plane ring): turns about Z read as headings.
      this.gizmo.space = 'world'
    }
    this.needsRender = true
  }

  /** Picks the stored point under a viewport position (CSS pixels from the canvas's top left), then refines it. */
  async pickAt(x: number, y: number, refine = true): Promise<PickResult | null> {
    const hit = this.pickLocal(x, y)
    if (!hit) return null
    const result = this.resultOf(hit)
    const seq = ++this.pickSeq
    this.lastPickResult = result
    this.marks.pick.place(hit.render)
    this.needsRender = true
    if (!refine) return result
    const inst = hit.target.instance
    const matrix = [...inst.matrix]
    try {
      const nearest = await this.source.nearest(inst.scanId, result.scanPoint)
      if (!nearest || this.disposed) return result
      const scanPoint: Vec3 = [nearest.x, nearest.y, nearest.z]
      const refined: PickResult = { ...result, scanPoint, point: transformPoint(matrix, ...scanPoint), refined: true }
      if (seq === this.pickSeq) {
        this.lastPickResult = refined
        this.marks.pick.place(this.sceneToRender(refined.point))
        this.needsRender = true
      }
      return refined
    } catch (error) {
      console.warn('The nearest stored point could not be fetched; keeping the point from the loaded tiles.', error)
      return result
    }
  }

  /** The last picked point, scene frame. */
  lastPick(): PickResult | null {
    return this.lastPickResult
  }

  clearPick(): void {
    this.pickSeq++
    this.lastPickResult = null
    this.marks.pick.place(null)
    this.needsRender = true
  }

  stats(): ViewerStats {
    return {
      pointsDrawn: this.pointsDrawn,
      drawLimit: this.limit,
      tilesLoaded: this.cache.size,
      tilesPending: this.requests.pending,
      firstFrameMs: this.firstFrameMs,
      frames: this.frames,
      cacheBytes: this.cache.bytes,
    }
  }

  /** A scene-frame point to CSS pixels from the canvas's top left (null before the render origin is known). */
  project(x: number, y: number, z: number): { x: number; y: number } | null {
    if (!this.origin) return null
    const camera = this.camera()
    camera.updateMatrixWorld()
    const v = this.sceneToRender([x, y, z]).project(camera)
    return { x: ((v.x + 1) / 2) * this.width, y: ((1 - v.y) / 2) * this.height }
  }

  instanceStatus(instanceId: string): { status: InstanceStatus; message?: string } | null {
    const inst = this.instances.get(instanceId)
    return inst ? { status: inst.status, message: inst.message } : null
  }

  /** The render origin, scene frame (null until the first hierarchy arrives). */
  get renderOrigin(): Vec3 | null {
    return this.origin ? [...this.origin] : null
  }

  dispose(): void {
    if (this.disposed) return
    this.disposed = true
    cancelAnimationFrame(this.rafId)
    if (this.hoverTimer) clearTimeout(this.hoverTimer)
    this.resizeObserver.disconnect()
    this.canvas.removeEventListener('pointerdown', this.onPointerDown)
    this.canvas.removeEventListener('pointerup', this.onPointerUp)
    this.canvas.removeEventListener('pointermove', this.onPointerMove)
    this.canvas.removeEventListener('pointerleave', this.onPointerLeave)
    this.canvas.removeEventListener('dblclick', this.onDoubleClick)
    this.canvas.removeEventListener('wheel', this.onUserCamera)
    this.walk.dispose()
    this.orbit.removeEventListener('change', this.onCameraChange)
    this.orbit.dispose()
    this.disposeProfile()
    this.gizmo.detach()
    this.gizmo.dispose()
    this.requests.dispose()
    for (const record of this.scans.values()) {
      record.controller.abort()
      if (record.retry) clearTimeout(record.retry)
    }
    this.scans.clear()
    for (const inst of this.instances.values()) inst.dispose()
    this.instances.clear()
    this.cache.dispose()
    this.grid.dispose()
    this.slabOutline.dispose()
    this.markerLayer.dispose()
    this.trimOutlines.dispose()
    this.boxHandles.dispose()
    for (const mark of this.peopleCursors.values()) mark.dispose()
    for (const mark of Object.values(this.marks)) mark.dispose()
    this.emitter.clear()
    this.renderer.dispose()
    this.renderer.forceContextLoss()
    this.canvas.remove()
  }

  // ---------------------------------------------------------------- frames and cameras

  private tick = (now: number): void => {
    if (this.disposed) return
    this.rafId = requestAnimationFrame(this.tick)
    const seconds = (now - this.lastTick) / 1000
    this.lastTick = now
    if (this.walk.enabled && this.walk.update(seconds)) this.onCameraChange()
    if (this.lodDirty) this.updateLod()
    if (this.needsRender) this.render()
  }

  private render(): void {
    this.needsRender = false
    this.renderer.render(this.scene, this.camera())
    this.markerLayer.render(this.camera())
    this.frames++
    if (this.firstFrameMs === null && this.pointsDrawn > 0) this.firstFrameMs = performance.now() - this.createdAt
  }

  private requestRender = (): void => {
    this.needsRender = true
  }

  private camera(): THREE.PerspectiveCamera | THREE.OrthographicCamera {
    return this.ortho ?? this.perspective
  }

  private makeOrbit(camera: THREE.PerspectiveCamera | THREE.OrthographicCamera): OrbitControls {
    const controls = new OrbitControls(camera, this.canvas)
    controls.enableDamping = false
    controls.screenSpacePanning = true
    controls.zoomToCursor = true
    controls.minDistance = 0.02
    controls.maxDistance = 20_000
    controls.rotateSpeed = 0.8
    return controls
  }

  private disposeProfile(): void {
    if (this.profileOrbit) {
      this.profileOrbit.removeEventListener('change', this.onCameraChange)
      this.profileOrbit.dispose()
      this.profileOrbit = null
    }
    this.ortho = null
  }

  private onCameraChange = (): void => {
    this.updateClipRange()
    this.lodDirty = true
    this.needsRender = true
  }

  /** Near and far planes from the distance to the focus and the scene's size (depth precision for close work). */
  private updateClipRange(): void {
    const radius = this.sceneRadius()
    if (this.ortho) {
      this.ortho.near = 0.01
      this.ortho.far = radius * 6 + 10
      this.ortho.updateProjectionMatrix()
      return
    }
    const camera = this.perspective
    const centre = this.sceneBox && this.origin ? this.sceneBox.getCenter(new THREE.Vector3()).sub(this.originVector()) : new THREE.Vector3()
    const focus = this.walk.enabled ? 1 : camera.position.distanceTo(this.orbit.target)
    camera.near = THREE.MathUtils.clamp(focus * 0.002, 0.001, 0.2)
    camera.far = Math.max(camera.position.distanceTo(centre) + radius * 4, focus * 4) + 10
    camera.updateProjectionMatrix()
  }

  private resize(): void {
    const width = Math.max(this.container.clientWidth, 1)
    const height = Math.max(this.container.clientHeight, 1)
    if (width === this.width && height === this.height) return
    this.width = width
    this.height = height
    this.renderer.setSize(width, height)
    this.markerLayer.setSize(width, height)
    this.perspective.aspect = width / height
    this.perspective.updateProjectionMatrix()
    if (this.ortho) {
      const half = (this.ortho.top - this.ortho.bottom) / 2
      this.ortho.left = (-half * width) / height
      this.ortho.right = (half * width) / height
      this.ortho.updateProjectionMatrix()
    }
    this.lodDirty = true
    this.needsRender = true
  }

  private sceneRadius(): number {
    return this.sceneBox ? Math.max(this.sceneBox.getSize(new THREE.Vector3()).length() / 2, 0.05) : 5
  }

  private originVector(): THREE.Vector3 {
    const o = this.origin ?? [0, 0, 0]
    return new THREE.Vector3(o[0], o[1], o[2])
  }

  private renderToScene(p: THREE.Vector3): Vec3 {
    const o = this.origin ?? [0, 0, 0]
    return [p.x + o[0], p.y + o[1], p.z + o[2]]
  }

  /** A placement's centre and half diagonal (scene frame), or the scene's when it has no points yet. */
  private extentOf(instanceId?: string): { centre: Vec3; radius: number } {
    const inst = instanceId ? this.instances.get(instanceId) : undefined
    if (inst?.tree) {
      const { min, max } = inst.tree.bounds
      return { centre: inst.sceneCentre(), radius: Math.max(Math.hypot(max[0] - min[0], max[1] - min[1], max[2] - min[2]) / 2, 0.05) }
    }
    return { centre: this.sceneCentre(), radius: this.sceneRadius() }
  }

  private sceneCentre(): Vec3 {
    if (!this.sceneBox) return this.origin ? [...this.origin] : [0, 0, 0]
    const c = this.sceneBox.getCenter(new THREE.Vector3())
    return [c.x, c.y, c.z]
  }

  private sceneToRender(p: Vec3): THREE.Vector3 {
    const o = this.origin ?? [0, 0, 0]
    return new THREE.Vector3(p[0] - o[0], p[1] - o[1], p[2] - o[2])
  }

  // ---------------------------------------------------------------- placements and scans

  private ensureScan(scanId: string): ScanRecord {
    let record = this.scans.get(scanId)
    if (record) return record
    record = {
      scanId,
      tree: null,
      status: 'loading',
      hasRgb: false,
      hasIntensity: false,
      intensityMin: Infinity,
      intensityMax: -Infinity,
      controller: new AbortController(),
      retry: null,
    }
    this.scans.set(scanId, record)
    void this.fetchHierarchy(record)
    return record
  }

  private async fetchHierarchy(record: ScanRecord): Promise<void> {
    record.retry = null
    try {
      const hierarchy = await this.source.hierarchy(record.scanId, record.controller.signal)
      if (this.disposed || record.controller.signal.aborted) return
      record.tree = new ScanTree(hierarchy)
      record.status = record.tree.root ? 'ready' : 'empty'
      record.message = undefined
    } catch (error) {
      if (this.disposed || record.controller.signal.aborted) return
      const status = (error as { status?: number }).status
      if (status === 409) {
        // The scan is still being processed: ask again shortly.
        record.status = 'waiting'
        record.message = error instanceof Error ? error.message : undefined
        record.retry = setTimeout(() => void this.fetchHierarchy(record), HIERARCHY_RETRY_MS)
      } else {
        record.status = 'failed'
        record.message = error instanceof Error ? error.message : String(error)
      }
    }
    for (const inst of this.instances.values()) if (inst.scanId === record.scanId) this.attachTree(inst, record)
    this.afterPlacementsChanged()
  }

  private attachTree(inst: ViewInstance, record: ScanRecord): void {
    const changed = inst.status !== record.status || inst.message !== record.message
    inst.status = record.status
    inst.message = record.message
    if (record.tree && inst.tree !== record.tree) {
      inst.setTree(record.tree)
      if (!this.origin) {
        this.origin = inst.sceneCentre()
        this.markerLayer.originKnown()
        this.boxHandles.replace()
      }
      inst.setTrims(this.placementTrims.get(inst.id) ?? null)
    }
    const u = inst.material.uniforms
    u.uPointSize.value = this.pointSize * this.pixelRatio
    u.uColorMode.value = COLOR_MODE_INDEX[this.colorMode]
    u.uCutStyle.value = this.cutStyle === 'dim' ? 1 : 0
    this.applyScanUniforms(record)
    if (changed) this.emitter.emit('instance-status', { instanceId: inst.id, status: inst.status, message: inst.message })
  }

  private applyScanUniforms(record: ScanRecord): void {
    for (const inst of this.instances.values()) {
      if (inst.scanId !== record.scanId) continue
      const u = inst.material.uniforms
      u.uHasRgb.value = record.hasRgb ? 1 : 0
      u.uHasIntensity.value = record.hasIntensity ? 1 : 0
      if (record.intensityMax >= record.intensityMin) u.uIntensityRange.value.set(record.intensityMin, record.intensityMax)
    }
    this.needsRender = true
  }

  /** After any change to placements: positions, bounds, grid, height ramp, clipping, what to load. */
  private afterPlacementsChanged(): void {
    const origin = this.origin
    if (origin) {
      for (const inst of this.instances.values()) {
        inst.applyMatrix(origin)
        inst.pivot.visible = inst.visible && inst.tree !== null
      }
    }
    this.updateSceneBox()
    this.applySection()
    if (this.gizmo.object && ![...this.instances.values()].some((i) => i.pivot === this.gizmo.object)) this.gizmo.detach()
    if (this.autoFrame && this.sceneBox) this.frameAll()
    this.lodDirty = true
    this.needsRender = true
  }

  private removeInstance(inst: ViewInstance): void {
    if (this.gizmo.object === inst.pivot) this.gizmo.detach()
    inst.dispose()
    this.instances.delete(inst.id)
  }

  private dropScan(record: ScanRecord): void {
    record.controller.abort()
    if (record.retry) clearTimeout(record.retry)
    this.requests.dropScan(record.scanId)
    this.cache.dropScan(record.scanId, () => undefined)
    this.scans.delete(record.scanId)
  }

  /** Scene-frame box of every placement with a hierarchy; the floor grid and the height ramp follow it. */
  private updateSceneBox(): void {
    const box = new THREE.Box3()
    const visibleBox = new THREE.Box3()
    const corner = new THREE.Vector3()
    for (const inst of this.instances.values()) {
      if (!inst.tree) continue
      const { min, max } = inst.tree.bounds
      for (let i = 0; i < 8; i++) {
        const p = transformPoint(inst.matrix, i & 1 ? max[0] : min[0], i & 2 ? max[1] : min[1], i & 4 ? max[2] : min[2])
        corner.set(p[0], p[1], p[2])
        box.expandByPoint(corner)
        if (inst.visible) visibleBox.expandByPoint(corner)
      }
    }
    if (box.isEmpty() || !this.origin) {
      this.sceneBox = null
      // An empty scene still shows its floor: a 10 m grid around the origin.
      this.grid.fit(0, 0, 0, 10)
      return
    }
    this.sceneBox = box
    const o = this.origin
    const ramp = visibleBox.isEmpty() ? box : visibleBox
    for (const inst of this.instances.values()) {
      inst.material.uniforms.uHeightRange.value.set(ramp.min.z, ramp.max.z)
      inst.material.uniforms.uOriginZ.value = o[2]
    }
    const size = box.getSize(new THREE.Vector3())
    const centre = box.getCenter(new THREE.Vector3())
    this.grid.fit(centre.x - o[0], centre.y - o[1], box.min.z - o[2], Math.max(size.x, size.y))
    this.trimOutlines.rebuild()
    this.updateClipRange()
  }

  private applySection(): void {
    const planes = this.slab && this.origin ? slabPlanes(this.slab, this.origin, this.planes) : null
    for (const inst of this.instances.values()) inst.material.clippingPlanes = planes
    const r = this.sceneRadius() * 0.8
    const extent = planes ? padExtent(this.slabExtent() ?? { uMin: -r, uMax: r, vMin: -r, vMax: r }, 0.05, 0.05) : null
    this.slabOutline.show(this.slab && this.origin ? this.slab : null, this.origin ?? [0, 0, 0], extent ?? { uMin: -r, uMax: r, vMin: -r, vMax: r })
    this.lodDirty = true
    this.needsRender = true
  }

  /**
   * Where the drawn points inside the slab lie in the plane's (u, v) axes, metres from the slab's point; null
   * when none is drawn. Reads at most about 400 k points (an even stride), enough for a frame.
   */
  private slabExtent(): PlaneExtent | null {
    if (!this.slab || !this.origin) return null
    const { u, v } = slabAxes(this.slab.normal)
    const n = new THREE.Vector3(...this.slab.normal)
    const centre = this.sceneToRender(this.slab.point)
    const half = this.slab.thickness / 2
    const targets = this.pickTargets(false)
    const total = targets.reduce((sum, t) => sum + t.entry.count, 0)
    const stride = Math.max(1, Math.floor(total / 400_000))
    const p = new THREE.Vector3()
    let uMin = Infinity, uMax = -Infinity, vMin = Infinity, vMax = -Infinity
    for (const { entry, object } of targets) {
      const world = object.matrixWorld
      const positions = entry.positions
      for (let i = 0; i < entry.count; i += stride) {
        p.set(positions[i * 3]!, positions[i * 3 + 1]!, positions[i * 3 + 2]!).applyMatrix4(world).sub(centre)
        if (Math.abs(p.dot(n)) > half) continue
        const a = p.dot(u)
        const b = p.dot(v)
        if (a < uMin) uMin = a
        if (a > uMax) uMax = a
        if (b < vMin) vMin = b
        if (b > vMax) vMax = b
      }
    }
    return uMin <= uMax ? { uMin, uMax, vMin, vMax } : null
  }

  // ---------------------------------------------------------------- level of detail

  private updateLod(): void {
    this.lodDirty = false
    const trees: LodTree<ViewInstance>[] = []
    for (const inst of this.instances.values()) {
      if (!inst.visible || !inst.tree || !this.origin) continue
      const scanId = inst.scanId
      trees.push({ owner: inst, tree: inst.tree, world: inst.worldMatrix(), isLoaded: (node) => this.cache.has(tileKey(scanId, node.key)) })
    }
    const result = selectNodes(trees, { camera: this.camera(), heightPx: this.height, planes: this.slab ? this.planes : null }, { budget: this.limit, spacingPx: this.detailPx })
    const shown = new Map<ViewInstance, TileEntry[]>()
    const keep = new Set<string>()
    const wants = new Map<string, TileWant>()
    for (const pick of result.picks) {
      const inst = pick.owner
      const key = tileKey(inst.scanId, pick.node.key)
      keep.add(key)
      const entry = pick.loaded ? this.cache.peek(key) : undefined
      if (entry) {
        this.cache.touch(key)
        let list = shown.get(inst)
        if (!list) shown.set(inst, (list = []))
        list.push(entry)
      } else {
        const previous = wants.get(key)
        if (!previous || previous.priority < pick.priority) wants.set(key, { key, scanId: inst.scanId, nodeKey: pick.node.key, priority: pick.priority })
      }
    }
    let drawn = 0
    const trimBudget = { points: TRIM_POINTS_PER_FRAME }
    let trimsPending = false
    for (const inst of this.instances.values()) {
      drawn += inst.show(inst.visible ? (shown.get(inst) ?? []) : [], trimBudget)
      trimsPending ||= inst.trimsPending
    }
    this.pointsDrawn = drawn
    this.requests.want([...wants.values()])
    this.cache.evict(keep, (entry) => {
      for (const inst of this.instances.values()) if (inst.scanId === entry.scanId) inst.forget(entry.key)
    })
    // Tiles still showing older trims' states: more of them next frame.
    if (trimsPending) this.lodDirty = true
    this.needsRender = true
  }

  private onTileLoaded = (want: TileWant, tile: DecodedTile): void => {
    const record = this.scans.get(want.scanId)
    if (!record || !record.tree || this.disposed) return
    const node = record.tree.nodes.get(want.nodeKey)
    const entry = entryFromTile(want.scanId, want.nodeKey, tile, node?.radius ?? Infinity)
    this.cache.add(entry)
    // Intensities are raw file values: normalise by the range of this scan's tiles loaded so far.
    const before = [record.hasRgb, record.hasIntensity, record.intensityMin, record.intensityMax].join()
    record.hasRgb ||= entry.hasRgb
    if (entry.hasIntensity) {
      record.hasIntensity = true
      record.intensityMin = Math.min(record.intensityMin, entry.intensityMin)
      record.intensityMax = Math.max(record.intensityMax, entry.intensityMax)
    }
    if ([record.hasRgb, record.hasIntensity, record.intensityMin, record.intensityMax].join() !== before) this.applyScanUniforms(record)
    this.lodDirty = true
  }

  private onTileFailed = (want: TileWant, error: unknown): void => {
    console.warn(`Tile ${want.nodeKey} of scan ${want.scanId} did not load; it is asked for again later.`, error)
  }

  // ---------------------------------------------------------------- picking and pointer

  private pickTargets(onlyPickable = true): PickTarget[] {
    const targets: PickTarget[] = []
    this.content.updateMatrixWorld(true)
    for (const inst of this.instances.values()) {
      if (!inst.visible || !inst.pivot.visible) continue
      if (onlyPickable && this.pickOnly && inst.id !== this.pickOnly) continue
      for (const [key, object] of inst.drawnObjects()) {
        const entry = this.cache.peek(key)
        if (entry) targets.push({ instance: inst, entry, object, states: inst.statesOf(key) })
      }
    }
    return targets
  }

  private pickLocal(x: number, y: number): PickHit | null {
    if (!this.origin) return null
    return pickPoint(this.pickTargets(), { camera: this.camera(), width: this.width, height: this.height, planes: this.slab ? this.planes : null }, x, y, PICK_TOLERANCE_PX)
  }

  private resultOf(hit: PickHit): PickResult {
    const inst = hit.target.instance
    const { origin, positions } = hit.target.entry
    const j = hit.index * 3
    // Float64 sum of the node's origin and the float32 offset: the stored coordinate, not the GPU's.
    const scanPoint: Vec3 = [origin[0] + positions[j]!, origin[1] + positions[j + 1]!, origin[2] + positions[j + 2]!]
    return {
      instanceId: inst.id,
      scanId: inst.scanId,
      scanPoint,
      point: transformPoint(inst.matrix, ...scanPoint),
      refined: false,
      pixelDistance: hit.pixelDistance,
      depth: hit.depth,
    }
  }

  private canvasPoint(event: MouseEvent): { x: number; y: number } {
    const rect = this.canvas.getBoundingClientRect()
    return { x: event.clientX - rect.left, y: event.clientY - rect.top }
  }

  private onUserCamera = (): void => {
    this.autoFrame = false
  }

  private onPointerDown = (event: PointerEvent): void => {
    this.autoFrame = false
    this.canvas.focus({ preventScroll: true })
    const p = this.canvasPoint(event)
    this.down = { x: p.x, y: p.y, at: performance.now(), button: event.button, onGizmo: (this.gizmo.object !== undefined && this.gizmo.axis !== null) || this.boxHandles.onHandle }
  }

  private onPointerUp = (event: PointerEvent): void => {
    const down = this.down
    this.down = null
    if (!down || down.button !== 0 || down.onGizmo || this.gizmo.dragging || this.boxHandles.dragging) return
    const p = this.canvasPoint(event)
    if (Math.hypot(p.x - down.x, p.y - down.y) > CLICK_SLOP_PX || performance.now() - down.at > CLICK_MAX_MS) return
    if (this.clickMode === 'screen') {
      this.emitter.emit('screen-click', p)
      return
    }
    if (this.clickMode !== 'pick') return
    void this.pickAt(p.x, p.y).then((result) => {
      if (result && !this.disposed) this.emitter.emit('pick', result)
    })
  }

  private onDoubleClick = (event: MouseEvent): void => {
    const p = this.canvasPoint(event)
    const hit = this.pickLocal(p.x, p.y)
    if (!hit) return
    const controls = this.profileOrbit ?? (this.walk.enabled ? null : this.orbit)
    if (!controls) return
    controls.target.copy(hit.render)
    controls.update()
    this.onCameraChange()
  }

  private onPointerMove = (event: PointerEvent): void => {
    if (this.clickMode !== 'pick' || event.buttons !== 0 || this.gizmo.dragging || this.boxHandles.dragging) {
      if (this.hoverAt) this.showHover(null)
      return
    }
    this.hoverAt = this.canvasPoint(event)
    if (this.hoverTimer) return
    this.hoverTimer = setTimeout(() => {
      this.hoverTimer = null
      if (this.disposed || !this.hoverAt) return
      const hit = this.pickLocal(this.hoverAt.x, this.hoverAt.y)
      this.showHover(hit)
    }, HOVER_EVERY_MS)
  }

  private onPointerLeave = (): void => {
    this.showHover(null)
  }

  private showHover(hit: PickHit | null): void {
    if (!hit) this.hoverAt = null
    this.marks.hover.place(hit ? hit.render : null)
    this.needsRender = true
    this.emitter.emit('hover', hit ? this.resultOf(hit) : null)
  }

  // ---------------------------------------------------------------- gizmo

  private onGizmoDragging = (event: { value: unknown }): void => {
    const dragging = event.value === true
    const controls = this.profileOrbit ?? this.orbit
    controls.enabled = !dragging && !this.walk.enabled
    if (dragging) {
      this.gizmoMoved = false
      return
    }
    const inst = this.gizmoInstance()
    if (!inst || !this.gizmoMoved || !this.origin) return
    inst.matrix = inst.matrixFromPivot(this.origin)
    this.updateSceneBox()
    this.emitter.emit('placement-change', { instanceId: inst.id, matrix: [...inst.matrix], final: true })
  }

  private onGizmoMove = (): void => {
    const inst = this.gizmoInstance()
    if (!inst || !this.origin) return
    this.gizmoMoved = true
    inst.matrix = inst.matrixFromPivot(this.origin)
    this.emitter.emit('placement-change', { instanceId: inst.id, matrix: [...inst.matrix], final: false })
    this.lodDirty = true
    this.needsRender = true
  }

  private gizmoInstance(): ViewInstance | undefined {
    const object = this.gizmo.object
    if (!object) return undefined
    for (const inst of this.instances.values()) if (inst.pivot === object) return inst
    return undefined
  }
}

function clampLimit(points: number): number {
  if (!Number.isFinite(points)) return DEFAULT_DRAW_LIMIT
  return Math.round(THREE.MathUtils.clamp(points, MIN_DRAW_LIMIT, MAX_DRAW_LIMIT))
}
