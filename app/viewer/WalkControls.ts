/**
 * Walking through an interior: Spanmark's own scheme, shown in the walk help popover (WALK_KEYS).
 * Arrow keys step forward, back and sideways on the level (heading only, never pitch, so the eye height
 * holds); R and V, or Page Up and Page Down, rise and sink; Shift strides four times faster; the wheel sets
 * the pace; dragging with the left button looks around (no pointer lock, so the cursor stays free for picks).
 * Escape leaves. Z is up; yaw turns about Z, pitch is held within ±85° so the view never flips.
 */
import * as THREE from 'three'

export const WALK_KEYS: readonly { keys: string[]; action: string }[] = [
  { keys: ['↑', '↓'], action: 'step forward, back' },
  { keys: ['←', '→'], action: 'step sideways' },
  { keys: ['R', 'V'], action: 'rise, sink (also Page Up, Page Down)' },
  { keys: ['Shift'], action: 'hold to stride four times faster' },
  { keys: ['wheel'], action: 'pace: slower or faster' },
  { keys: ['drag'], action: 'look around' },
  { keys: ['Esc'], action: 'stop walking' },
]

const MOVE_KEYS: Record<string, [number, number, number]> = {
  ArrowUp: [1, 0, 0],
  ArrowDown: [-1, 0, 0],
  ArrowLeft: [0, 1, 0],
  ArrowRight: [0, -1, 0],
  PageUp: [0, 0, 1],
  PageDown: [0, 0, -1],
  KeyR: [0, 0, 1],
  KeyV: [0, 0, -1],
}

const MAX_PITCH = THREE.MathUtils.degToRad(85)
const LOOK_RADIANS_PER_PX = 0.004

function typingInto(target: EventTarget | null): boolean {
  const el = target as HTMLElement | null
  return !!el && (el.tagName === 'INPUT' || el.tagName === 'TEXTAREA' || el.tagName === 'SELECT' || el.isContentEditable)
}

export class WalkControls {
  /** Metres per second at a normal stride. */
  pace = 1.4
  private yaw = 0
  private pitch = 0
  private held = new Set<string>()
  private shift = false
  private dragging: { x: number; y: number; id: number } | null = null
  private active = false

  constructor(
    private camera: THREE.PerspectiveCamera,
    private dom: HTMLElement,
    private onChange: () => void,
    private onExit: () => void,
  ) {}

  get enabled(): boolean {
    return this.active
  }

  start(): void {
    if (this.active) return
    this.active = true
    const dir = new THREE.Vector3()
    this.camera.getWorldDirection(dir)
    this.yaw = Math.atan2(dir.y, dir.x)
    this.pitch = THREE.MathUtils.clamp(Math.asin(THREE.MathUtils.clamp(dir.z, -1, 1)), -MAX_PITCH, MAX_PITCH)
    this.applyLook()
    window.addEventListener('keydown', this.onKeyDown)
    window.addEventListener('keyup', this.onKeyUp)
    window.addEventListener('blur', this.onBlur)
    this.dom.addEventListener('pointerdown', this.onPointerDown)
    this.dom.addEventListener('pointermove', this.onPointerMove)
    this.dom.addEventListener('pointerup', this.onPointerUp)
    this.dom.addEventListener('wheel', this.onWheel, { passive: false })
  }

  stop(): void {
    if (!this.active) return
    this.active = false
    this.held.clear()
    this.dragging = null
    window.removeEventListener('keydown', this.onKeyDown)
    window.removeEventListener('keyup', this.onKeyUp)
    window.removeEventListener('blur', this.onBlur)
    this.dom.removeEventListener('pointerdown', this.onPointerDown)
    this.dom.removeEventListener('pointermove', this.onPointerMove)
    this.dom.removeEventListener('pointerup', this.onPointerUp)
    this.dom.removeEventListener('wheel', this.onWheel)
  }

  /** Moves by the keys held; true when the camera moved. */
  update(seconds: number): boolean {
    if (!this.active || this.held.size === 0) return false
    let forward = 0, side = 0, up = 0
    for (const code of this.held) {
      const m = MOVE_KEYS[code]
      if (!m) continue
      forward += m[0]
      side += m[1]
      up += m[2]
    }
    if (forward === 0 && side === 0 && up === 0) return false
    const step = this.pace * (this.shift ? 4 : 1) * Math.min(seconds, 0.1)
    const c = Math.cos(this.yaw), s = Math.sin(this.yaw)
    // Forward along the heading, sideways to its left, up along Z.
    this.camera.position.x += (forward * c - side * s) * step
    this.camera.position.y += (forward * s + side * c) * step
    this.camera.position.z += up * step
    this.applyLook()
    return true
  }

  /** A point ahead of the eye, for the orbit focus when walking stops. */
  pointAhead(distance: number): THREE.Vector3 {
    const dir = new THREE.Vector3()
    this.camera.getWorldDirection(dir)
    return this.camera.position.clone().addScaledVector(dir, distance)
  }

  private applyLook(): void {
    const cp = Math.cos(this.pitch)
    const target = new THREE.Vector3(cp * Math.cos(this.yaw), cp * Math.sin(this.yaw), Math.sin(this.pitch)).add(this.camera.position)
    this.camera.up.set(0, 0, 1)
    this.camera.lookAt(target)
    this.camera.updateMatrixWorld()
  }

  private onKeyDown = (event: KeyboardEvent): void => {
    if (typingInto(event.target)) return
    this.shift = event.shiftKey
    if (event.code === 'Escape') {
      this.onExit()
      return
    }
    if (event.code in MOVE_KEYS && !event.ctrlKey && !event.metaKey && !event.altKey) {
      event.preventDefault()
      this.held.add(event.code)
      this.onChange()
    }
  }

  private onKeyUp = (event: KeyboardEvent): void => {
    this.shift = event.shiftKey
    this.held.delete(event.code)
  }

  private onBlur = (): void => {
    this.held.clear()
  }

  private onPointerDown = (event: PointerEvent): void => {
    if (event.button !== 0) return
    this.dragging = { x: event.clientX, y: event.clientY, id: event.pointerId }
  }

  private onPointerMove = (event: PointerEvent): void => {
    if (!this.dragging || event.pointerId !== this.dragging.id || (event.buttons & 1) === 0) return
    const dx = event.clientX - this.dragging.x
    const dy = event.clientY - this.dragging.y
    this.dragging.x = event.clientX
    this.dragging.y = event.clientY
    this.yaw -= dx * LOOK_RADIANS_PER_PX
    this.pitch = THREE.MathUtils.clamp(this.pitch - dy * LOOK_RADIANS_PER_PX, -MAX_PITCH, MAX_PITCH)
    this.applyLook()
    this.onChange()
  }

  private onPointerUp = (): void => {
    this.dragging = null
  }

  private onWheel = (event: WheelEvent): void => {
    event.preventDefault()
    this.pace = THREE.MathUtils.clamp(this.pace * (event.deltaY < 0 ? 1.25 : 0.8), 0.05, 50)
  }

  dispose(): void {
    this.stop()
  }
}
