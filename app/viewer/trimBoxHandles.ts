/**
 * The box trim being drawn: a wire box with handles (three's TransformControls) to move it, turn it and size
 * it. The facade keeps TransformControls' own terms inside: the page speaks of a box (centre, size, rotation,
 * scene frame) and of three handle kinds; the handles' "scale" is the box's size (a unit box scaled by its
 * size, so a scale of 0.8 along x is a 0.8 m edge). Render frame = scene frame minus the render origin, as
 * everywhere in the viewer; a rotation is the same in both.
 */
import * as THREE from 'three'
import { TransformControls } from 'three/examples/jsm/controls/TransformControls.js'
import type { Vec3 } from './types'

export interface BoxTrimShape {
  centre: Vec3
  size: Vec3
  /** Unit quaternion [x, y, z, w]. */
  rotation: [number, number, number, number]
}

export type BoxHandleKind = 'move' | 'turn' | 'size'
const MODE: Record<BoxHandleKind, 'translate' | 'rotate' | 'scale'> = { move: 'translate', turn: 'rotate', size: 'scale' }
/** The schema's smallest box edge (shared/schemas/objects.ts). */
const MIN_EDGE = 0.001

export interface BoxHandleOptions {
  toRender(p: Vec3): THREE.Vector3
  toScene(p: THREE.Vector3): Vec3
  /** The box as dragged (`final` once, on release). */
  onChange(shape: BoxTrimShape, final: boolean): void
  /** While a handle is held the camera must not turn. */
  onDragging(dragging: boolean): void
  requestRender(): void
}

export class TrimBoxHandles {
  readonly object = new THREE.Group()
  private pivot = new THREE.Object3D()
  private wire: THREE.LineSegments
  private fill: THREE.Mesh
  private controls: TransformControls
  private shape: BoxTrimShape | null = null

  constructor(
    camera: THREE.Camera,
    canvas: HTMLElement,
    private options: BoxHandleOptions,
  ) {
    const unit = new THREE.BoxGeometry(1, 1, 1)
    this.wire = new THREE.LineSegments(new THREE.EdgesGeometry(unit), new THREE.LineBasicMaterial({ color: '#EBC77E', depthTest: false, transparent: true }))
    this.fill = new THREE.Mesh(unit, new THREE.MeshBasicMaterial({ color: '#EBC77E', transparent: true, opacity: 0.08, depthWrite: false, side: THREE.DoubleSide }))
    this.wire.renderOrder = 6
    this.pivot.add(this.wire, this.fill)
    this.pivot.visible = false
    this.controls = new TransformControls(camera, canvas)
    this.controls.size = 0.8
    this.controls.space = 'local'
    this.controls.addEventListener('change', options.requestRender)
    this.controls.addEventListener('dragging-changed', this.onDragging)
    this.controls.addEventListener('objectChange', this.onMove)
    this.object.add(this.pivot, this.controls.getHelper())
  }

  /** Shows the box with its handles (scene frame), or hides both (null). */
  show(shape: BoxTrimShape | null, kind: BoxHandleKind = 'move', colour = '#EBC77E'): void {
    this.shape = shape
    if (!shape) {
      this.controls.detach()
      this.pivot.visible = false
      this.options.requestRender()
      return
    }
    this.place(shape)
    ;(this.wire.material as THREE.LineBasicMaterial).color.set(colour)
    ;(this.fill.material as THREE.MeshBasicMaterial).color.set(colour)
    this.pivot.visible = true
    if (this.controls.object !== this.pivot) this.controls.attach(this.pivot)
    this.controls.setMode(MODE[kind])
    this.options.requestRender()
  }

  /** After the render origin is known or changes. */
  replace(): void {
    if (this.shape) this.place(this.shape)
  }

  setCamera(camera: THREE.Camera): void {
    this.controls.camera = camera
  }

  setEnabled(on: boolean): void {
    this.controls.enabled = on
  }

  get dragging(): boolean {
    return this.controls.dragging
  }

  /** The pointer is over one of the handles (a click there is no pick). */
  get onHandle(): boolean {
    return this.handle !== null
  }

  /** Which handle the pointer is over ('X', 'Y', 'Z', 'XY', ... as three names its axes), or null. */
  get handle(): string | null {
    return this.controls.object !== undefined ? this.controls.axis : null
  }

  dispose(): void {
    this.controls.detach()
    this.controls.dispose()
    this.wire.geometry.dispose()
    ;(this.wire.material as THREE.Material).dispose()
    this.fill.geometry.dispose()
    ;(this.fill.material as THREE.Material).dispose()
    this.object.removeFromParent()
  }

  private place(shape: BoxTrimShape): void {
    this.pivot.position.copy(this.options.toRender(shape.centre))
    this.pivot.quaternion.set(...shape.rotation)
    this.pivot.scale.set(...shape.size)
    this.pivot.updateMatrixWorld(true)
  }

  private read(): BoxTrimShape {
    const s = this.pivot.scale
    // A handle may drag an edge through zero (a negative scale mirrors the box): the edge's length is what counts.
    const size: Vec3 = [Math.max(Math.abs(s.x), MIN_EDGE), Math.max(Math.abs(s.y), MIN_EDGE), Math.max(Math.abs(s.z), MIN_EDGE)]
    const q = this.pivot.quaternion.clone().normalize()
    return { centre: this.options.toScene(this.pivot.position), size, rotation: [q.x, q.y, q.z, q.w] }
  }

  private onMove = (): void => {
    this.shape = this.read()
    this.options.onChange(this.shape, false)
  }

  private onDragging = (event: { value: unknown }): void => {
    const dragging = event.value === true
    this.options.onDragging(dragging)
    if (!dragging && this.shape) {
      this.shape = this.read()
      this.place(this.shape)
      this.options.onChange(this.shape, true)
    }
  }
}
