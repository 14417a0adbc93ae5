/**
 * A faint floor grid in the viewport (Spanmark's palette: #2E2A25 on the charcoal), in the XY plane at the lowest point of
 * the scene, with square cells of a round size (0.1, 0.25, 0.5, 1, 2.5, 5 ... m) so about 20 cover the scene.
 */
import * as THREE from 'three'

const NICE = [1, 2.5, 5]

export function niceCellSize(extent: number): number {
  const raw = Math.max(extent, 0.01) / 20
  const decade = 10 ** Math.floor(Math.log10(raw))
  for (const n of NICE) if (n * decade >= raw) return n * decade
  return 10 * decade
}

export class FloorGrid {
  readonly object: THREE.LineSegments
  private material = new THREE.LineBasicMaterial({ color: '#2E2A25', depthWrite: false })
  cell = 1

  constructor() {
    this.object = new THREE.LineSegments(new THREE.BufferGeometry(), this.material)
    this.object.renderOrder = -1
    this.object.frustumCulled = false
    this.object.visible = false
  }

  /** Centre (render frame) and the scene's largest horizontal extent, metres. */
  fit(centreX: number, centreY: number, floorZ: number, extent: number): void {
    const cell = niceCellSize(extent)
    this.cell = cell
    const half = Math.ceil((Math.max(extent, cell) * 1.5) / cell) * cell
    // Lines on multiples of the cell in scene terms would need the origin; lines through the scene centre read the same.
    const cx = Math.round(centreX / cell) * cell
    const cy = Math.round(centreY / cell) * cell
    const vertices: number[] = []
    for (let d = -half; d <= half + 1e-9; d += cell) {
      vertices.push(cx + d, cy - half, floorZ, cx + d, cy + half, floorZ)
      vertices.push(cx - half, cy + d, floorZ, cx + half, cy + d, floorZ)
    }
    this.object.geometry.dispose()
    const geometry = new THREE.BufferGeometry()
    geometry.setAttribute('position', new THREE.Float32BufferAttribute(vertices, 3))
    this.object.geometry = geometry
    this.object.visible = true
  }

  dispose(): void {
    this.object.geometry.dispose()
    this.material.dispose()
  }
}
