/**
 * Small marks drawn over the points: where a click would land (a hollow ring), the picked point (a filled disc
 * in ochre) and the first point of a two-click section (a section-coloured disc). Drawn on top (no depth test)
 * at a fixed size in pixels; render frame.
 */
import * as THREE from 'three'
import { rgbOfHex } from './pointMaterial'

const vertexShader = /* glsl */ `
uniform float uSize;
void main() {
  gl_Position = projectionMatrix * modelViewMatrix * vec4(position, 1.0);
  gl_PointSize = uSize;
}
`
const fragmentShader = /* glsl */ `
uniform vec3 uColor;
uniform float uRing;
void main() {
  vec2 d = gl_PointCoord - vec2(0.5);
  float r = length(d) * 2.0;
  if (r > 1.0) discard;
  // Hollow ring with a dark rim so it reads on bright and dark points alike.
  if (uRing > 0.5 && r < 0.62) discard;
  vec3 c = r > 0.84 ? vec3(0.118, 0.106, 0.094) : uColor;
  gl_FragColor = vec4(c, 1.0);
}
`

export type MarkKind = 'hover' | 'pick' | 'section'
export interface MarkStyle {
  color: string
  ring: boolean
  size: number
}

const STYLE: Record<MarkKind, MarkStyle> = {
  hover: { color: '#F7F3EC', ring: true, size: 16 },
  pick: { color: '#C98A12', ring: false, size: 12 },
  section: { color: '#C7A0E8', ring: false, size: 12 },
}

export class SceneMark {
  readonly object: THREE.Points
  private material: THREE.ShaderMaterial

  /** One of the viewer's own marks, or another person's pointer in their colour. */
  constructor(kind: MarkKind | MarkStyle, pixelRatio: number) {
    const style = typeof kind === 'string' ? STYLE[kind] : kind
    const [r, g, b] = rgbOfHex(style.color)
    this.material = new THREE.ShaderMaterial({
      uniforms: { uColor: { value: new THREE.Vector3(r, g, b) }, uRing: { value: style.ring ? 1 : 0 }, uSize: { value: style.size * pixelRatio } },
      vertexShader,
      fragmentShader,
      depthTest: false,
      depthWrite: false,
    })
    const geometry = new THREE.BufferGeometry()
    geometry.setAttribute('position', new THREE.Float32BufferAttribute([0, 0, 0], 3))
    this.object = new THREE.Points(geometry, this.material)
    this.object.renderOrder = 10
    this.object.frustumCulled = false
    this.object.visible = false
  }

  /** Render-frame position, or null to hide. */
  place(at: THREE.Vector3 | null): void {
    if (!at) {
      this.object.visible = false
      return
    }
    this.object.position.copy(at)
    this.object.visible = true
  }

  dispose(): void {
    this.object.geometry.dispose()
    this.material.dispose()
  }
}
