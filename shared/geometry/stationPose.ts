/**
 * A station's pose in the project frame: a rotation by `heading` (radians, anticlockwise seen from above,
 * about +Z) followed by a translation to `position` (metres): p = Rz(heading) p_s + t. Right-handed, Z up.
 * Reads x y z from input[inOffset..], writes to out[outOffset..] (may be the same array and place).
 */
export function applyStationPose(
  heading: number,
  position: readonly [number, number, number],
  input: Float64Array | number[],
  inOffset: number,
  out: Float64Array | number[],
  outOffset: number,
): void {
  const c = Math.cos(heading)
  const s = Math.sin(heading)
  const x = input[inOffset] as number
  const y = input[inOffset + 1] as number
  const z = input[inOffset + 2] as number
  out[outOffset] = c * x - s * y + position[0]
  out[outOffset + 1] = s * x + c * y + position[1]
  out[outOffset + 2] = z + position[2]
}
