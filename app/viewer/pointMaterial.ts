/**
 * The points' shader: round points of a fixed size in pixels, coloured by the scan's RGB, its intensity
 * (normalised by the range loaded so far), the scene height (Spanmark's own ramp, below) or the placement's
 * colour, and clipped by the section slab (three's clipping chunks, so the renderer's clipping planes apply).
 * A placement with trims shown gets a per-point `trimState` (trimStates.ts): a scene cut's points are hidden
 * (moved outside the clip volume) or dimmed, an open object's kept points lit, its other points dimmed.
 * Colours are display (sRGB) values written as they are: no colour-space conversion on the way out.
 */
import * as THREE from 'three'
import type { ColorMode } from './types'

export const COLOR_MODE_INDEX: Record<ColorMode, number> = { rgb: 0, intensity: 1, height: 2, placement: 3 }

/**
 * Spanmark's height ramp, low to high: deep slate, moss, ochre, pale sand. Steps of even perceived
 * lightness so a floor, a sill and a lintel read apart in black-and-white print as well.
 */
export const HEIGHT_RAMP: readonly string[] = ['#243447', '#3F6A5A', '#7E8F3C', '#C98A12', '#EBC77E', '#F7EEDC']

function rampGlsl(): string {
  const stops = HEIGHT_RAMP.map((hex) => rgbOfHex(hex).map((v) => v.toFixed(4)).join(', '))
  const n = stops.length - 1
  const lines = stops.map((s, i) => `  const vec3 S${i} = vec3(${s});`).join('\n')
  let body = `  float x = clamp(t, 0.0, 1.0) * ${n.toFixed(1)};\n`
  for (let i = 0; i < n; i++) body += `  if (x <= ${(i + 1).toFixed(1)}) return mix(S${i}, S${i + 1}, x - ${i.toFixed(1)});\n`
  return `vec3 heightRamp(float t) {\n${lines}\n${body}  return S${n};\n}`
}

/** '#rrggbb' to 0..1 display values. */
export function rgbOfHex(hex: string): [number, number, number] {
  const m = /^#?([0-9a-f]{2})([0-9a-f]{2})([0-9a-f]{2})$/i.exec(hex)
  if (!m) return [0.8, 0.8, 0.8]
  return [parseInt(m[1]!, 16) / 255, parseInt(m[2]!, 16) / 255, parseInt(m[3]!, 16) / 255]
}

const vertexShader = /* glsl */ `
#include <common>
#include <clipping_planes_pars_vertex>
attribute vec3 rgb;
attribute float intensity;
attribute float trimState;
uniform float uPointSize;
uniform float uCutStyle;
uniform int uColorMode;
uniform vec3 uPlacementColor;
uniform float uHasRgb;
uniform float uHasIntensity;
uniform vec2 uIntensityRange;
uniform vec2 uHeightRange;
uniform float uOriginZ;
varying vec3 vColor;
${rampGlsl()}
vec3 intensityShade(float value) {
  float t = clamp((value - uIntensityRange.x) / max(uIntensityRange.y - uIntensityRange.x, 1e-6), 0.0, 1.0);
  // A warm grey ramp: dark returns stay visible on the charcoal background.
  return mix(vec3(0.16, 0.15, 0.14), vec3(0.98, 0.96, 0.92), t);
}
void main() {
  vec4 mvPosition = modelViewMatrix * vec4(position, 1.0);
  gl_Position = projectionMatrix * mvPosition;
  gl_PointSize = uPointSize;
  vec3 c = uPlacementColor;
  if (uColorMode == 0 && uHasRgb > 0.5) c = rgb;
  else if ((uColorMode == 0 || uColorMode == 1) && uHasIntensity > 0.5) c = intensityShade(intensity);
  else if (uColorMode == 2) {
    float sceneZ = (modelMatrix * vec4(position, 1.0)).z + uOriginZ;
    c = heightRamp((sceneZ - uHeightRange.x) / max(uHeightRange.y - uHeightRange.x, 1e-6));
  }
  // trimState: 0 shown as it is, 1 cut by a scene cut, 2 kept by the open object, 3 left out by it.
  if (trimState > 0.5 && trimState < 1.5) {
    if (uCutStyle < 0.5) {
      gl_Position = vec4(2.0, 2.0, 2.0, 1.0);
      gl_PointSize = 0.0;
    } else {
      c = mix(c, vec3(0.118, 0.106, 0.094), 0.78);
      gl_PointSize = max(1.0, uPointSize * 0.6);
    }
  } else if (trimState > 1.5 && trimState < 2.5) {
    c = mix(c, vec3(0.788, 0.541, 0.071), 0.6);
  } else if (trimState > 2.5) {
    c = mix(c, vec3(0.118, 0.106, 0.094), 0.6);
  }
  vColor = c;
  #include <clipping_planes_vertex>
}
`

const fragmentShader = /* glsl */ `
#include <clipping_planes_pars_fragment>
varying vec3 vColor;
void main() {
  #include <clipping_planes_fragment>
  vec2 d = gl_PointCoord - vec2(0.5);
  if (dot(d, d) > 0.25) discard;
  gl_FragColor = vec4(vColor, 1.0);
}
`

export interface PointUniforms {
  [name: string]: THREE.IUniform
  uPointSize: THREE.IUniform<number>
  uColorMode: THREE.IUniform<number>
  uPlacementColor: THREE.IUniform<THREE.Vector3>
  uHasRgb: THREE.IUniform<number>
  uHasIntensity: THREE.IUniform<number>
  uIntensityRange: THREE.IUniform<THREE.Vector2>
  uHeightRange: THREE.IUniform<THREE.Vector2>
  uOriginZ: THREE.IUniform<number>
  /** A scene cut's points: 0 hidden, 1 dimmed. */
  uCutStyle: THREE.IUniform<number>
}

export type PointMaterial = THREE.ShaderMaterial & { uniforms: PointUniforms }

export function createPointMaterial(): PointMaterial {
  const uniforms: PointUniforms = {
    uPointSize: { value: 2 },
    uColorMode: { value: COLOR_MODE_INDEX.rgb },
    uPlacementColor: { value: new THREE.Vector3(0.8, 0.8, 0.8) },
    uHasRgb: { value: 0 },
    uHasIntensity: { value: 0 },
    uIntensityRange: { value: new THREE.Vector2(0, 1) },
    uHeightRange: { value: new THREE.Vector2(0, 1) },
    uOriginZ: { value: 0 },
    uCutStyle: { value: 0 },
  }
  const material = new THREE.ShaderMaterial({ uniforms, vertexShader, fragmentShader, clipping: true })
  // Tiles drawn without trims carry no trimState: the attribute then reads 0 (shown as it is), whatever another
  // program last left in that attribute slot.
  const withDefaults = material as unknown as { defaultAttributeValues: Record<string, number[]> }
  withDefaults.defaultAttributeValues = { ...withDefaults.defaultAttributeValues, trimState: [0] }
  return material as PointMaterial
}
