/**
 * One placement in the viewer. Two groups: `pivot` sits at the centre of the scan's bounds (so the gizmo turns a
 * placement about its middle, not about a far-away scan origin) with the placement's rotation; `group`, inside
 * it, shifts by minus that centre. Together they are the placement's matrix relative to the render origin:
 * pivot × group = [R | M·c − O] × [I | −c] = [R | t − O]. Each drawn node is one THREE.Points in `group`
 * (the node's centre as its position, its tile's float32 offsets as geometry). Geometries belong to the
 * TileCache; the material (colour, intensity range) is the placement's own. A placement with trims shown draws
 * each tile through a geometry of its own that shares the tile's buffers and adds the points' `trimState`
 * (trimStates.ts), since two placements of one scan share tiles but not trims.
 */
import * as THREE from 'three'
import { transformPoint } from '@shared/geometry/rigidTransform'
import { createPointMaterial, rgbOfHex, type PointMaterial } from './pointMaterial'
import type { ScanTree } from './ScanTree'
import type { TileEntry } from './TileCache'
import { hasTrims, trimStates, TRIM_STATE, type PlacementTrims } from './trimStates'
import type { InstanceSpec, InstanceStatus, Vec3 } from './types'

const _m = new THREE.Matrix4()
const _s = new THREE.Vector3()

export class ViewInstance {
  readonly pivot = new THREE.Group()
  readonly group = new THREE.Group()
  readonly material: PointMaterial = createPointMaterial()
  readonly id: string
  readonly scanId: string
  tree: ScanTree | null = null
  status: InstanceStatus = 'loading'
  message: string | undefined
  /** Scene frame, column-major, rigid. */
  matrix: number[]
  visible: boolean
  color: string
  /** The pivot, scan frame: the centre of the scan's bounds once known. */
  private centre: Vec3 = [0, 0, 0]
  private drawn = new Map<string, THREE.Points>()
  private trims: PlacementTrims | null = null
  /** Per tile key: the geometry with the points' trim states, and the states (picking skips cut points). */
  private trimmed = new Map<string, { geometry: THREE.BufferGeometry; states: Uint8Array; version: number }>()
  /** Bumped by each setTrims: a tile's states of an older version are shown until computed again. */
  private trimVersion = 0
  /** Some drawn tiles still show states of older trims (the per-frame budget ran out). */
  trimsPending = false

  constructor(spec: InstanceSpec) {
    this.id = spec.id
    this.scanId = spec.scanId
    this.matrix = [...spec.matrix]
    this.visible = spec.visible
    this.color = spec.color
    this.pivot.name = `placement ${spec.id}`
    this.pivot.visible = false
    this.pivot.add(this.group)
    this.applyColor()
  }

  setTree(tree: ScanTree | null): void {
    this.tree = tree
    if (tree) {
      const { min, max } = tree.bounds
      this.centre = [(min[0] + max[0]) / 2, (min[1] + max[1]) / 2, (min[2] + max[2]) / 2]
    }
  }

  /** The scan's bounds centre in the scene frame. */
  sceneCentre(): Vec3 {
    return transformPoint(this.matrix, ...this.centre)
  }

  /** Places both groups from `matrix` (float64 arithmetic here; the GPU sees only small offsets). */
  applyMatrix(origin: Vec3): void {
    const p = this.sceneCentre()
    _m.fromArray(this.matrix)
    _m.elements[12] = p[0] - origin[0]
    _m.elements[13] = p[1] - origin[1]
    _m.elements[14] = p[2] - origin[2]
    _m.decompose(this.pivot.position, this.pivot.quaternion, _s)
    this.pivot.scale.set(1, 1, 1)
    this.group.position.set(-this.centre[0], -this.centre[1], -this.centre[2])
    this.pivot.updateMatrixWorld(true)
  }

  /** The scene-frame matrix the groups hold now (after the gizmo moved the pivot): t = pivot − R·c + O. */
  matrixFromPivot(origin: Vec3): number[] {
    this.pivot.updateMatrix()
    const out = Array.from(this.pivot.matrix.elements)
    const [cx, cy, cz] = this.centre
    out[12] = out[12]! - (out[0]! * cx + out[4]! * cy + out[8]! * cz) + origin[0]
    out[13] = out[13]! - (out[1]! * cx + out[5]! * cy + out[9]! * cz) + origin[1]
    out[14] = out[14]! - (out[2]! * cx + out[6]! * cy + out[10]! * cz) + origin[2]
    out[3] = 0
    out[7] = 0
    out[11] = 0
    out[15] = 1
    return out
  }

  /** Scan frame to render frame. */
  worldMatrix(): THREE.Matrix4 {
    this.pivot.updateMatrixWorld(true)
    return this.group.matrixWorld
  }

  applyColor(): void {
    const [r, g, b] = rgbOfHex(this.color)
    this.material.uniforms.uPlacementColor.value.set(r, g, b)
  }

  /**
   * The placement's scene cuts and the open object's trims of it, scan frame (null: none). The states of the
   * tiles drawn now are computed again at the next `show`.
   */
  setTrims(trims: PlacementTrims | null): void {
    this.trims = hasTrims(trims) ? trims : null
    this.trimVersion++
    if (!this.trims) for (const key of [...this.trimmed.keys()]) this.dropTrimmed(key)
  }

  /** A tile's trim states (null: no trims, every point shown as it is). */
  statesOf(key: string): Uint8Array | null {
    return this.trimmed.get(key)?.states ?? null
  }

  /** How many of the drawn points a scene cut takes away (browser tests). */
  cutCount(): number {
    let n = 0
    for (const key of this.drawn.keys()) {
      const states = this.trimmed.get(key)?.states
      if (states) for (let i = 0; i < states.length; i++) if (states[i] === TRIM_STATE.cut) n++
    }
    return n
  }

  /**
   * The geometry a tile is drawn with. States are computed for a tile that has none at once; a tile showing
   * older trims' states keeps them while `budget` (points, shared by the placements this frame) is spent, and
   * is done in a later frame, so a trim change over millions of drawn points never stalls one frame.
   */
  private geometryOf(entry: TileEntry, budget: { points: number }): THREE.BufferGeometry {
    if (!this.trims) return entry.geometry
    let t = this.trimmed.get(entry.key)
    const fresh = t && t.version === this.trimVersion && t.states.length === entry.count
    if (t && !fresh && budget.points <= 0 && t.states.length === entry.count) {
      this.trimsPending = true
      return t.geometry
    }
    if (!t || !fresh) {
      if (t) this.dropTrimmed(entry.key)
      const states = trimStates(entry.origin, entry.positions, entry.count, this.trims)
      budget.points -= entry.count
      const geometry = new THREE.BufferGeometry()
      for (const [name, attribute] of Object.entries(entry.geometry.attributes)) geometry.setAttribute(name, attribute)
      geometry.setAttribute('trimState', new THREE.BufferAttribute(states, 1))
      geometry.boundingSphere = entry.geometry.boundingSphere
      t = { geometry, states, version: this.trimVersion }
      this.trimmed.set(entry.key, t)
    }
    return t.geometry
  }

  /** Frees a trimmed geometry's own buffer only: the tile's buffers belong to the cache. */
  private dropTrimmed(key: string): void {
    const t = this.trimmed.get(key)
    if (!t) return
    for (const name of Object.keys(t.geometry.attributes)) if (name !== 'trimState') t.geometry.deleteAttribute(name)
    t.geometry.dispose()
    this.trimmed.delete(key)
  }

  /** Shows exactly these tiles, creating Points for new ones; returns how many points that draws. */
  show(entries: readonly TileEntry[], budget: { points: number } = { points: Infinity }): number {
    const keep = new Set<string>()
    let points = 0
    this.trimsPending = false
    for (const entry of entries) {
      keep.add(entry.key)
      let object = this.drawn.get(entry.key)
      const geometry = this.geometryOf(entry, budget)
      if (!object || object.geometry !== geometry) {
        if (object) this.group.remove(object)
        object = new THREE.Points(geometry, this.material)
        object.name = entry.nodeKey
        object.position.set(entry.origin[0], entry.origin[1], entry.origin[2])
        object.matrixAutoUpdate = false
        object.updateMatrix()
        this.group.add(object)
        this.drawn.set(entry.key, object)
      }
      points += entry.count
    }
    for (const [key, object] of this.drawn) {
      if (keep.has(key)) continue
      this.group.remove(object)
      this.drawn.delete(key)
      this.dropTrimmed(key)
    }
    return points
  }

  /** The Points drawn now, by tile key, for picking. */
  drawnObjects(): IterableIterator<[string, THREE.Points]> {
    return this.drawn.entries()
  }

  forget(key: string): void {
    const object = this.drawn.get(key)
    if (!object) return
    this.group.remove(object)
    this.drawn.delete(key)
    this.dropTrimmed(key)
  }

  dispose(): void {
    for (const object of this.drawn.values()) this.group.remove(object)
    this.drawn.clear()
    for (const key of [...this.trimmed.keys()]) this.dropTrimmed(key)
    this.pivot.removeFromParent()
    this.material.dispose()
  }
}
