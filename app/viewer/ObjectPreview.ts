/**
 * A small view of an object's kept points (the thinned sample GET /api/objects/:id/points gives, scene frame):
 * its own canvas and renderer, points coloured by height with the viewer's ramp, framed from the usual
 * three-quarter view, turned by dragging. Rendered on demand; `dispose()` frees the GPU resources.
 */
import * as THREE from 'three'
import { OrbitControls } from 'three/examples/jsm/controls/OrbitControls.js'
import { HEIGHT_RAMP } from './pointMaterial'

export class ObjectPreview {
  readonly canvas: HTMLCanvasElement
  private renderer: THREE.WebGLRenderer
  private scene = new THREE.Scene()
  private camera = new THREE.PerspectiveCamera(40, 1, 0.01, 1000)
  private controls: OrbitControls
  private points: THREE.Points | null = null
  private material = new THREE.PointsMaterial({ size: 2, sizeAttenuation: false, vertexColors: true })
  private frame = 0

  constructor(container: HTMLElement, width: number, height: number) {
    this.renderer = new THREE.WebGLRenderer({ antialias: false, preserveDrawingBuffer: true })
    this.renderer.setPixelRatio(Math.min(window.devicePixelRatio || 1, 2))
    this.renderer.setSize(width, height)
    this.renderer.setClearColor('#1E1B18', 1)
    this.canvas = this.renderer.domElement
    container.appendChild(this.canvas)
    this.camera.aspect = width / height
    this.camera.up.set(0, 0, 1)
    this.controls = new OrbitControls(this.camera, this.canvas)
    this.controls.enableDamping = false
    this.controls.addEventListener('change', this.render)
  }

  /** Shows these points (x y z flat, scene frame); an empty list shows nothing. */
  setPoints(xyz: readonly number[]): void {
    if (this.points) {
      this.scene.remove(this.points)
      this.points.geometry.dispose()
      this.points = null
    }
    const n = Math.floor(xyz.length / 3)
    if (n === 0) {
      this.render()
      return
    }
    const box = new THREE.Box3()
    const v = new THREE.Vector3()
    for (let i = 0; i < n; i++) box.expandByPoint(v.set(xyz[i * 3]!, xyz[i * 3 + 1]!, xyz[i * 3 + 2]!))
    const centre = box.getCenter(new THREE.Vector3())
    // Positions about the box's centre (float32 keeps sub-millimetre there).
    const positions = new Float32Array(n * 3)
    const colours = new Float32Array(n * 3)
    const ramp = HEIGHT_RAMP.map((hex) => new THREE.Color(hex))
    const low = box.min.z, span = Math.max(box.max.z - box.min.z, 1e-6)
    const c = new THREE.Color()
    for (let i = 0; i < n; i++) {
      positions[i * 3] = xyz[i * 3]! - centre.x
      positions[i * 3 + 1] = xyz[i * 3 + 1]! - centre.y
      positions[i * 3 + 2] = xyz[i * 3 + 2]! - centre.z
      const t = ((xyz[i * 3 + 2]! - low) / span) * (ramp.length - 1)
      const k = Math.min(Math.floor(t), ramp.length - 2)
      c.copy(ramp[k]!).lerp(ramp[k + 1]!, t - k)
      colours.set([c.r, c.g, c.b], i * 3)
    }
    const geometry = new THREE.BufferGeometry()
    geometry.setAttribute('position', new THREE.BufferAttribute(positions, 3))
    geometry.setAttribute('color', new THREE.BufferAttribute(colours, 3))
    this.points = new THREE.Points(geometry, this.material)
    this.scene.add(this.points)
    const radius = Math.max(box.getSize(new THREE.Vector3()).length() / 2, 0.05)
    const distance = radius / Math.sin(THREE.MathUtils.degToRad(this.camera.fov) / 2)
    this.camera.position.set(-0.55, -0.75, 0.45).normalize().multiplyScalar(distance)
    this.camera.near = distance / 100
    this.camera.far = distance * 10
    this.camera.updateProjectionMatrix()
    this.controls.target.set(0, 0, 0)
    this.controls.update()
    this.render()
  }

  /** Frames rendered (browser tests: the preview drew). */
  get frames(): number {
    return this.frame
  }

  dispose(): void {
    this.controls.removeEventListener('change', this.render)
    this.controls.dispose()
    this.points?.geometry.dispose()
    this.material.dispose()
    this.renderer.dispose()
    this.renderer.forceContextLoss()
    this.canvas.remove()
  }

  private render = (): void => {
    this.renderer.render(this.scene, this.camera)
    this.frame++
  }
}
