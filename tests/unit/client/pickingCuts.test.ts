// Picking never lands on a point a scene cut takes away (app/viewer/picking.ts with the viewer's trim states):
// two stored points on one view ray, the front one cut; the pick goes through it to the one behind, as it
// would if the cut point were not stored at all. Geometry by three.js's own camera and projection.
import { describe, expect, it } from 'vitest'
import * as THREE from 'three'
import { pickPoint, type PickTarget } from '@/viewer/picking'
import { TRIM_STATE } from '@/viewer/trimStates'
import type { ViewInstance } from '@/viewer/ViewInstance'
import type { TileEntry } from '@/viewer/TileCache'

function target(states: Uint8Array | null): PickTarget {
  const positions = new Float32Array([0, 0, 1, 0, 0, 0])
  const geometry = new THREE.BufferGeometry()
  geometry.setAttribute('position', new THREE.BufferAttribute(positions, 3))
  geometry.boundingSphere = new THREE.Sphere(new THREE.Vector3(), 2)
  const object = new THREE.Points(geometry)
  object.updateMatrixWorld(true)
  const entry = { key: 's/r', scanId: 's', nodeKey: 'r', count: 2, origin: [0, 0, 0], positions } as unknown as TileEntry
  return { instance: {} as ViewInstance, entry, object, states }
}

describe('picking with scene cuts', () => {
  const camera = new THREE.PerspectiveCamera(50, 1, 0.01, 100)
  camera.position.set(0, 0, 5)
  camera.lookAt(0, 0, 0)
  const view = { camera, width: 400, height: 400 }

  it('takes the front point when nothing is cut, and the one behind it when the front one is cut', () => {
    expect(pickPoint([target(null)], view, 200, 200, 6)?.index).toBe(0)
    expect(pickPoint([target(new Uint8Array([TRIM_STATE.shown, TRIM_STATE.shown]))], view, 200, 200, 6)?.index).toBe(0)
    expect(pickPoint([target(new Uint8Array([TRIM_STATE.cut, TRIM_STATE.shown]))], view, 200, 200, 6)?.index).toBe(1)
    // Lit or left out by an open object, a point is still a stored point of the placement: it is picked.
    expect(pickPoint([target(new Uint8Array([TRIM_STATE.left, TRIM_STATE.shown]))], view, 200, 200, 6)?.index).toBe(0)
    expect(pickPoint([target(new Uint8Array([TRIM_STATE.cut, TRIM_STATE.cut]))], view, 200, 200, 6)).toBeNull()
  })
})
