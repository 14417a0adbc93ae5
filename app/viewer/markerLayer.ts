/**
 * Markers drawn over the points: strokes (screen-space wide lines), a translucent fill, anchor dots and an
 * HTML label per marker, plus one preview of the marker being placed. The layer knows shapes, not marker
 * kinds: the page turns markers into `MarkerView`s (components/viewer/markerViews.ts).
 *
 * Frames: views come in the scene frame (metres, Z up); geometry is built in the render frame through the
 * viewer's own `toRender` (scene minus the render origin, float64 before float32), so nothing is drawn until
 * the viewer says the origin is known (`originKnown`).
 * Strokes, dots and labels are drawn on top of the points (no depth test) so a measurement is never hidden
 * by the surface it measures; the fill is depth-tested so it tints only what lies behind it.
 * Labels: three.js's CSS2DRenderer places them; a click on one calls `onSelect` with the marker's id.
 */
import * as THREE from 'three'
import { LineMaterial } from 'three/examples/jsm/lines/LineMaterial.js'
import { LineSegments2 } from 'three/examples/jsm/lines/LineSegments2.js'
import { LineSegmentsGeometry } from 'three/examples/jsm/lines/LineSegmentsGeometry.js'
import { CSS2DObject, CSS2DRenderer } from 'three/examples/jsm/renderers/CSS2DRenderer.js'
import { rgbOfHex } from './pointMaterial'
import type { Vec3 } from './types'
import './markerLayer.css'

export interface MarkerStroke {
  points: Vec3[]
  closed: boolean
  /** '#rrggbb' */
  color: string
  dashed?: boolean
}

/** A state as the label shows it: its words and its shape (never colour alone). */
export interface MarkerLabelState {
  word: string
  shape: 'disc' | 'ring-cross' | 'half-disc' | 'spinner' | 'ring'
  tone: 'good' | 'bad' | 'unsure' | 'neutral'
}

export interface MarkerLabelView {
  at: Vec3
  title: string
  value: string
  state: MarkerLabelState | null
  /** 'centre' (default): the label sits on `at`, as a dimension's figure breaks its line; 'above': just over it. */
  placement?: 'centre' | 'above'
}

export interface MarkerView {
  id: string
  color: string
  strokes: MarkerStroke[]
  /** A convex polygon, scene frame. */
  fill: { points: Vec3[]; color: string } | null
  dots: { at: Vec3; color: string; hollow: boolean }[]
  label: MarkerLabelView | null
}

const STROKE_PX = 2.5
const STROKE_SELECTED_PX = 4.5
const DOT_PX = 11
const DOT_SELECTED_PX = 14
const DASH_PX = 7
/** A dark rim under every stroke, so the kind colours read on pale plaster as well as on the charcoal. */
const HALO_PX = 2.5
const HALO_COLOUR = '#1E1B18'

const dotVertex = /* glsl */ `
attribute vec3 aColor;
attribute float aHollow;
uniform float uSize;
varying vec3 vColor;
varying float vHollow;
void main() {
  vColor = aColor;
  vHollow = aHollow;
  gl_Position = projectionMatrix * modelViewMatrix * vec4(position, 1.0);
  gl_PointSize = uSize;
}
`
const dotFragment = /* glsl */ `
varying vec3 vColor;
varying float vHollow;
void main() {
  vec2 d = gl_PointCoord - vec2(0.5);
  float r = length(d) * 2.0;
  if (r > 1.0) discard;
  vec3 rim = vec3(0.118, 0.106, 0.094);
  if (vHollow > 0.5) {
    // Off the points: a hollow ring with a cross (Spanmark's shape for "off the points").
    bool ring = r > 0.62;
    bool cross = abs(d.x - d.y) < 0.09 || abs(d.x + d.y) < 0.09;
    if (!ring && !cross) discard;
    gl_FragColor = vec4(r > 0.9 ? rim : vColor, 1.0);
    return;
  }
  gl_FragColor = vec4(r > 0.8 ? rim : vColor, 1.0);
}
`

const SVG_NS = 'http://www.w3.org/2000/svg'
const _projected = new THREE.Vector3()

/** The state's shape as a 10 px SVG (the same shapes as the tables' state marks). */
function stateMark(shape: MarkerLabelState['shape']): SVGSVGElement {
  const svg = document.createElementNS(SVG_NS, 'svg')
  svg.setAttribute('viewBox', '0 0 10 10')
  svg.setAttribute('width', '10')
  svg.setAttribute('height', '10')
  svg.setAttribute('aria-hidden', 'true')
  svg.classList.add('sm-marker-label__mark')
  const parts: Record<string, string>[] = []
  if (shape === 'disc') parts.push({ tag: 'circle', cx: '5', cy: '5', r: '4', fill: 'currentColor' })
  if (shape === 'ring' || shape === 'ring-cross') parts.push({ tag: 'circle', cx: '5', cy: '5', r: '3.6', fill: 'none', stroke: 'currentColor', 'stroke-width': '1.5' })
  if (shape === 'ring-cross') parts.push({ tag: 'path', d: 'M2.6 2.6l4.8 4.8M7.4 2.6L2.6 7.4', stroke: 'currentColor', 'stroke-width': '1.4', fill: 'none' })
  if (shape === 'half-disc') {
    parts.push({ tag: 'circle', cx: '5', cy: '5', r: '3.6', fill: 'none', stroke: 'currentColor', 'stroke-width': '1.5' })
    parts.push({ tag: 'path', d: 'M5 1.4a3.6 3.6 0 0 0 0 7.2z', fill: 'currentColor' })
  }
  if (shape === 'spinner') {
    svg.classList.add('sm-marker-label__mark--spin')
    parts.push({ tag: 'path', d: 'M5 1.4a3.6 3.6 0 1 1-3.6 3.6', fill: 'none', stroke: 'currentColor', 'stroke-width': '1.6' })
  }
  for (const { tag, ...attrs } of parts) {
    const el = document.createElementNS(SVG_NS, tag!)
    for (const [k, v] of Object.entries(attrs)) el.setAttribute(k, v)
    svg.appendChild(el)
  }
  return svg
}

export interface MarkerLayerOptions {
  pixelRatio: number
  /** Scene frame to the viewer's render frame. */
  toRender: (p: Vec3) => THREE.Vector3
  /** A label was clicked. */
  onSelect: (markerId: string) => void
  /** Something changed that needs a frame (a label's size, once its font arrives). */
  requestRender: () => void
}

/** Screen pixels, y down. */
export interface Box {
  left: number
  right: number
  top: number
  bottom: number
}

/**
 * How far to lift each box (negative: up, pixels) so that none overlaps an obstacle or a box placed before
 * it, with `gap` pixels between. Greedy in the given order (earlier boxes keep their place); boxes only
 * move up, so each step clears one more box and the loop ends.
 */
export function liftClear(boxes: readonly Box[], obstacles: readonly Box[], gap = 3): number[] {
  const placed: Box[] = [...obstacles]
  return boxes.map((r) => {
    let dy = 0
    for (let guard = 0; guard <= placed.length; guard++) {
      const hit = placed.find((p) => r.left < p.right && r.right > p.left && r.top + dy < p.bottom + gap && r.bottom + dy > p.top - gap)
      if (!hit) break
      dy = hit.top - gap - r.bottom
    }
    placed.push({ left: r.left, right: r.right, top: r.top + dy, bottom: r.bottom + dy })
    return dy
  })
}

/** Where a label may go, in order of preference, as multiples of its own size: beside, above, below, then farther out. */
const PLACES: readonly [number, number][] = [
  [0, 0],
  [1, 0], [-1, 0], [0, -1], [0, 1],
  [1, -1], [-1, -1], [1, 1], [-1, 1],
  [0.5, -1], [-0.5, -1], [0.5, 1], [-0.5, 1],
  [0.5, -2], [-0.5, -2], [0.5, 2], [-0.5, 2],
  [0, -2], [2, 0], [-2, 0], [0, 2],
  [1, -2], [-1, -2], [1, 2], [-1, 2],
  [2, -1], [-2, -1], [2, 1], [-2, 1],
  [0, -3], [0, 3],
]

/**
 * Where each label goes (pixels to move it by) so that none covers an obstacle (anchor dots), a label placed
 * before it, or the frame's edge: greedy in the given order, each label at the first free place around its
 * own (beside it right or left, above, below, then farther out: PLACES), so labels spread around their markers instead of
 * stacking in one column. A label with no free place near it falls back to being lifted clear (liftClear).
 * Common practice for map labels (candidate positions, first fit), no source.
 */
export function placeClear(boxes: readonly Box[], obstacles: readonly Box[], frame: Box | null = null, gap = 3): { dx: number; dy: number }[] {
  const placed: Box[] = [...obstacles]
  const hits = (b: Box) => placed.some((p) => b.left < p.right + gap && b.right > p.left - gap && b.top < p.bottom + gap && b.bottom > p.top - gap)
  const inside = (b: Box) => !frame || (b.left >= frame.left && b.right <= frame.right && b.top >= frame.top && b.bottom <= frame.bottom)
  return boxes.map((r) => {
    const w = r.right - r.left + gap, h = r.bottom - r.top + gap
    for (const [fx, fy] of PLACES) {
      const dx = fx * w, dy = fy * h
      const b = { left: r.left + dx, right: r.right + dx, top: r.top + dy, bottom: r.bottom + dy }
      if (hits(b) || !inside(b)) continue
      placed.push(b)
      return { dx, dy }
    }
    const [dy] = liftClear([r], placed, gap)
    placed.push({ left: r.left, right: r.right, top: r.top + dy!, bottom: r.bottom + dy! })
    return { dx: 0, dy: dy! }
  })
}

/**
 * The leader of a moved label: from where the line from the label's centre to its own place leaves the
 * label's box, to that place; in the label's own pixels (x, y from its top left), length and angle (degrees).
 */
export function leaderLine(width: number, height: number, dx: number, dy: number): { x: number; y: number; length: number; angle: number } {
  // The label's place is at -dx, -dy from where it now is.
  const vx = -dx, vy = -dy
  const distance = Math.hypot(vx, vy)
  const t = Math.min(vx === 0 ? Infinity : width / 2 / Math.abs(vx), vy === 0 ? Infinity : height / 2 / Math.abs(vy), 1)
  return { x: width / 2 + vx * t, y: height / 2 + vy * t, length: distance * (1 - t), angle: (Math.atan2(vy, vx) * 180) / Math.PI }
}

interface Entry {
  key: string
  selected: boolean
  group: THREE.Group
  label: CSS2DObject | null
  /** Render frame; labels keep clear of them. */
  dots: THREE.Vector3[]
  geometries: THREE.BufferGeometry[]
  materials: THREE.Material[]
}

export class MarkerLayer {
  /** Strokes, fills and dots; the viewer adds it to its scene. */
  readonly object = new THREE.Group()
  private labels = new THREE.Scene()
  private labelRenderer = new CSS2DRenderer()
  private entries = new Map<string, Entry>()
  private views = new Map<string, MarkerView>()
  private preview: MarkerView | null = null
  private previewEntry: Entry | null = null
  private selectedId: string | null = null
  private ready = false
  private lineMaterials = new Set<LineMaterial>()
  private resolution = new THREE.Vector2(1, 1)
  /** Other people's names beside their pointers, by awareness client id. */
  private people = new Map<number, CSS2DObject>()
  /** A label that changes size (its font arrives, its text changes) needs the overlaps worked out again. */
  private labelSizes: ResizeObserver

  private pixelRatio: number
  private toRender: (p: Vec3) => THREE.Vector3
  private onSelect: (markerId: string) => void

  constructor(container: HTMLElement, options: MarkerLayerOptions) {
    this.pixelRatio = options.pixelRatio
    this.toRender = options.toRender
    this.onSelect = options.onSelect
    const requestRender = options.requestRender
    this.labelSizes = new ResizeObserver(() => requestRender())
    const el = this.labelRenderer.domElement
    el.classList.add('sm-marker-labels')
    el.dataset.testid = 'marker-labels'
    container.appendChild(el)
    this.object.name = 'markers'
  }

  /** Labels let clicks through to the view (an outline being drawn), or (false) take them again. */
  setPassive(passive: boolean): void {
    this.labelRenderer.domElement.classList.toggle('sm-marker-labels--passive', passive)
  }

  /** The render origin is fixed from now on: build what was handed over before. */
  originKnown(): void {
    this.ready = true
    this.rebuildAll()
  }

  /** Draws exactly these markers (added, changed or removed by id; unchanged ones are kept as they are). */
  setMarkers(views: readonly MarkerView[]): void {
    const next = new Map(views.map((v) => [v.id, v]))
    for (const id of [...this.entries.keys()]) if (!next.has(id)) this.drop(id)
    this.views = next
    for (const view of views) this.build(view)
  }

  setPreview(view: MarkerView | null): void {
    this.preview = view
    if (this.previewEntry) this.disposeEntry(this.previewEntry)
    this.previewEntry = view && this.ready ? this.make(view, false, true) : null
  }

  setSelected(markerId: string | null): void {
    if (markerId === this.selectedId) return
    const before = this.selectedId
    this.selectedId = markerId
    for (const id of [before, markerId]) {
      const view = id ? this.views.get(id) : undefined
      if (view) this.build(view)
    }
  }

  get selected(): string | null {
    return this.selectedId
  }

  /**
   * Names of the other people here now, beside their pointers (render frame, or null while a pointer is off
   * the points), on their "here now" colour. They never take clicks and are not moved by the decluttering.
   */
  setPeopleNames(people: readonly { id: number; name: string; colour: string; at: THREE.Vector3 | null }[]): void {
    const keep = new Set(people.map((p) => p.id))
    for (const [id, label] of this.people) {
      if (keep.has(id)) continue
      this.labels.remove(label)
      label.element.remove()
      this.people.delete(id)
    }
    for (const p of people) {
      let label = this.people.get(p.id)
      if (!label) {
        const el = document.createElement('span')
        el.className = 'sm-person-label'
        el.dataset.testid = 'person-label'
        label = new CSS2DObject(el)
        // Just right of the ring, vertically centred on it.
        label.center.set(-0.2, 0.5)
        this.labels.add(label)
        this.people.set(p.id, label)
      }
      label.element.textContent = p.name
      label.element.style.background = p.colour
      label.visible = p.at !== null
      if (p.at) label.position.copy(p.at)
    }
  }

  /** CSS pixels of the viewport. */
  setSize(width: number, height: number): void {
    this.labelRenderer.setSize(width, height)
    this.resolution.set(width, height)
    for (const m of this.lineMaterials) m.resolution.copy(this.resolution)
  }

  /** After the points are drawn: places the labels for this camera, then lifts any that would overlap. */
  render(camera: THREE.Camera): void {
    this.labelRenderer.render(this.labels, camera)
    this.declutter(camera)
  }

  /** Scene-frame anchor of a marker's label (for tests and for framing), or null. */
  labelAt(markerId: string): Vec3 | null {
    return this.views.get(markerId)?.label?.at ?? null
  }

  dispose(): void {
    for (const id of [...this.entries.keys()]) this.drop(id)
    if (this.previewEntry) this.disposeEntry(this.previewEntry)
    this.previewEntry = null
    this.labelSizes.disconnect()
    this.labelRenderer.domElement.remove()
  }

  /**
   * Labels that would cover one another move, greedily: the one being placed and the selected one stay where
   * they are, then the others in list order, each to the first free place around its own (placeClear; CSS
   * `translate`, which adds to the transform CSS2DRenderer sets); a moved label keeps a thin leader back to
   * its place. Anchor dots count as placed already, so no label hides the points it is about. A few dozen
   * labels at most, so measuring them is cheap.
   */
  private declutter(camera: THREE.Camera): void {
    const entries = [...this.entries.entries()]
      .sort(([a], [b]) => Number(b === this.selectedId) - Number(a === this.selectedId))
      .map(([, e]) => e)
    if (this.previewEntry) entries.unshift(this.previewEntry)
    const labels = entries.map((e) => e.label?.element).filter((el): el is HTMLElement => !!el && el.style.display !== 'none')
    // Nothing to measure: no forced layout on frames without labels.
    if (labels.length === 0) return
    for (const el of labels) {
      el.style.translate = ''
      el.classList.remove('sm-marker-label--moved')
    }
    const boxes = labels.map((el) => el.getBoundingClientRect())
    const obstacles: Box[] = []
    const frame = this.labelRenderer.domElement.getBoundingClientRect()
    const half = DOT_SELECTED_PX / 2 + 2
    for (const e of [...this.entries.values(), ...(this.previewEntry ? [this.previewEntry] : [])]) {
      for (const d of e.dots) {
        const p = _projected.copy(d).project(camera)
        if (p.z < -1 || p.z > 1) continue
        const x = frame.left + ((p.x + 1) / 2) * frame.width
        const y = frame.top + ((1 - p.y) / 2) * frame.height
        obstacles.push({ left: x - half, right: x + half, top: y - half, bottom: y + half })
      }
    }
    const moves = placeClear(boxes, obstacles, { left: frame.left, right: frame.right, top: frame.top, bottom: frame.bottom })
    labels.forEach((el, i) => {
      const { dx, dy } = moves[i]!
      if (dx === 0 && dy === 0) return
      el.style.translate = `${Math.round(dx)}px ${Math.round(dy)}px`
      // A thin leader back to the label's own place.
      const leader = leaderLine(boxes[i]!.width, boxes[i]!.height, dx, dy)
      el.style.setProperty('--sm-leader-x', `${leader.x.toFixed(1)}px`)
      el.style.setProperty('--sm-leader-y', `${leader.y.toFixed(1)}px`)
      el.style.setProperty('--sm-leader-length', `${leader.length.toFixed(1)}px`)
      el.style.setProperty('--sm-leader-angle', `${leader.angle.toFixed(1)}deg`)
      el.classList.add('sm-marker-label--moved')
    })
  }

  // ---------------------------------------------------------------- building

  private rebuildAll(): void {
    for (const view of this.views.values()) this.build(view, true)
    this.setPreview(this.preview)
  }

  private build(view: MarkerView, force = false): void {
    const selected = view.id === this.selectedId
    const key = JSON.stringify(view)
    const old = this.entries.get(view.id)
    if (!force && old && old.key === key && old.selected === selected) return
    if (old) this.drop(view.id)
    if (!this.ready) return
    const entry = this.make(view, selected, false)
    entry.key = key
    this.entries.set(view.id, entry)
  }

  private render3(p: Vec3): [number, number, number] {
    const r = this.toRender(p)
    return [r.x, r.y, r.z]
  }

  private make(view: MarkerView, selected: boolean, preview: boolean): Entry {
    const entry: Entry = { key: '', selected, group: new THREE.Group(), label: null, dots: [], geometries: [], materials: [] }
    const width = selected ? STROKE_SELECTED_PX : STROKE_PX
    for (const stroke of view.strokes) {
      const positions: number[] = []
      const pts = stroke.points.map((p) => this.render3(p))
      const n = stroke.closed ? pts.length : pts.length - 1
      for (let i = 0; i < n; i++) positions.push(...pts[i]!, ...pts[(i + 1) % pts.length]!)
      if (positions.length === 0) continue
      const geometry = new LineSegmentsGeometry().setPositions(positions)
      entry.geometries.push(geometry)
      const halo = new LineMaterial({ color: HALO_COLOUR, linewidth: width + HALO_PX, depthTest: false, depthWrite: false, transparent: true, opacity: 0.55 })
      const material = new LineMaterial({ color: stroke.color, linewidth: width, depthTest: false, depthWrite: false, transparent: true, opacity: preview ? 0.9 : 1 })
      if (stroke.dashed) {
        // LineMaterial's dashes are in world units (its line distances are); a fixed length reads well at room scale.
        material.dashed = true
        material.dashSize = 0.004 * DASH_PX
        material.gapSize = 0.003 * DASH_PX
      }
      for (const [m, order] of [
        [halo, 5],
        [material, selected ? 7 : 6],
      ] as const) {
        m.resolution.copy(this.resolution)
        const line = new LineSegments2(geometry, m)
        if (m.dashed) line.computeLineDistances()
        line.renderOrder = order
        line.frustumCulled = false
        this.lineMaterials.add(m)
        entry.materials.push(m)
        entry.group.add(line)
      }
    }
    if (view.fill && view.fill.points.length >= 3) {
      const pts = view.fill.points.map((p) => this.render3(p))
      const positions: number[] = []
      for (let i = 1; i + 1 < pts.length; i++) positions.push(...pts[0]!, ...pts[i]!, ...pts[i + 1]!)
      const geometry = new THREE.BufferGeometry()
      geometry.setAttribute('position', new THREE.Float32BufferAttribute(positions, 3))
      const material = new THREE.MeshBasicMaterial({ color: view.fill.color, transparent: true, opacity: selected ? 0.24 : 0.13, side: THREE.DoubleSide, depthWrite: false })
      const mesh = new THREE.Mesh(geometry, material)
      mesh.renderOrder = 4
      mesh.frustumCulled = false
      entry.geometries.push(geometry)
      entry.materials.push(material)
      entry.group.add(mesh)
    }
    if (view.dots.length) {
      const positions: number[] = []
      const colours: number[] = []
      const hollow: number[] = []
      for (const d of view.dots) {
        const at = this.render3(d.at)
        entry.dots.push(new THREE.Vector3(...at))
        positions.push(...at)
        colours.push(...rgbOfHex(d.color))
        hollow.push(d.hollow ? 1 : 0)
      }
      const geometry = new THREE.BufferGeometry()
      geometry.setAttribute('position', new THREE.Float32BufferAttribute(positions, 3))
      geometry.setAttribute('aColor', new THREE.Float32BufferAttribute(colours, 3))
      geometry.setAttribute('aHollow', new THREE.Float32BufferAttribute(hollow, 1))
      const material = new THREE.ShaderMaterial({
        uniforms: { uSize: { value: (selected ? DOT_SELECTED_PX : DOT_PX) * this.pixelRatio } },
        vertexShader: dotVertex,
        fragmentShader: dotFragment,
        depthTest: false,
        depthWrite: false,
      })
      const points = new THREE.Points(geometry, material)
      points.renderOrder = 8
      points.frustumCulled = false
      entry.geometries.push(geometry)
      entry.materials.push(material)
      entry.group.add(points)
    }
    if (view.label) {
      const element = this.labelElement(view, selected, preview)
      this.labelSizes.observe(element)
      const label = new CSS2DObject(element)
      label.position.set(...this.render3(view.label.at))
      if (view.label.placement === 'above') label.center.set(0.5, 1.25)
      this.labels.add(label)
      entry.label = label
    }
    this.object.add(entry.group)
    return entry
  }

  private labelElement(view: MarkerView, selected: boolean, preview: boolean): HTMLElement {
    const label = view.label!
    const el = document.createElement(preview ? 'div' : 'button')
    el.className = 'sm-marker-label'
    el.style.setProperty('--sm-kind', view.color)
    if (preview) el.classList.add('sm-marker-label--preview')
    if (selected) el.classList.add('sm-marker-label--selected')
    el.dataset.testid = preview ? 'marker-preview-label' : 'marker-viewport-label'
    if (!preview) {
      const button = el as HTMLButtonElement
      button.type = 'button'
      button.dataset.markerId = view.id
      button.setAttribute('aria-pressed', String(selected))
      button.title = `${label.title}: ${label.value}${label.state ? `, ${label.state.word}` : ''}`
      button.addEventListener('click', (event) => {
        event.stopPropagation()
        this.onSelect(view.id)
      })
      // Keep a press on a label from turning the camera underneath.
      button.addEventListener('pointerdown', (event) => event.stopPropagation())
    }
    const value = document.createElement('span')
    value.className = 'sm-marker-label__value'
    value.textContent = label.value
    const meta = document.createElement('span')
    meta.className = 'sm-marker-label__meta'
    if (label.state) {
      const state = document.createElement('span')
      state.className = `sm-marker-label__state sm-marker-label__state--${label.state.tone}`
      state.append(stateMark(label.state.shape), document.createTextNode(label.state.word))
      meta.append(document.createTextNode(`${label.title} · `), state)
    } else meta.textContent = label.title
    el.append(value, meta)
    return el
  }

  private drop(id: string): void {
    const entry = this.entries.get(id)
    if (!entry) return
    this.disposeEntry(entry)
    this.entries.delete(id)
  }

  private disposeEntry(entry: Entry): void {
    this.object.remove(entry.group)
    if (entry.label) {
      this.labelSizes.unobserve(entry.label.element)
      this.labels.remove(entry.label)
      entry.label.element.remove()
    }
    for (const g of entry.geometries) g.dispose()
    for (const m of entry.materials) {
      if (m instanceof LineMaterial) this.lineMaterials.delete(m)
      m.dispose()
    }
  }
}
