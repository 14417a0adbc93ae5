/**
 * Where a range reading lands in the station frame for a two-axis (pan/tilt) head with mounting offsets.
 *
 * Frames (right-handed, Z up, metres; angles in radians):
 * - station frame: origin on the pan axis at the station point, +x is pan 0, +z up the pan axis;
 * - pan frame: the station frame turned by the pan angle H about +z (forward, left, up);
 * - head frame: the pan frame tilted by the elevation V about its left axis, so that forward is the beam
 *   direction (cosV cosH, cosV sinH, sinV), left is (-sinH, cosH, 0), up is (-sinV cosH, -sinV sinH, cosV).
 *
 * The tilt axis sits at `axisOffset` from the station point in the pan frame (turns with pan only); the
 * range origin sits at `beamOffset` from the tilt axis in the head frame (turns with pan and tilt); the
 * range r is measured from the range origin along the beam, corrected by the range zero offset a0
 * (r' = r + a0, the systematic term applied to the raw reading first). With all offsets zero this is
 * sphericalToCartesian(r', H, V).
 */
export interface PanTiltMount {
  /** forward, left, up in the pan frame, metres */
  axisOffset: readonly [number, number, number]
  /** forward, left, up in the head frame, metres */
  beamOffset: readonly [number, number, number]
  /** a0, metres */
  rangeZeroOffset: number
}

export function panTiltPoint(
  mount: PanTiltMount,
  range: number,
  pan: number,
  tilt: number,
  out: Float64Array | number[],
  offset = 0,
): void {
  const cosH = Math.cos(pan)
  const sinH = Math.sin(pan)
  const cosV = Math.cos(tilt)
  const sinV = Math.sin(tilt)
  const [af, al, au] = mount.axisOffset
  const [bf, bl, bu] = mount.beamOffset
  // Distance along the beam from the tilt axis.
  const along = range + mount.rangeZeroOffset + bf
  // Tilt axis position (pan frame) plus the beam offsets' left and up parts and the beam (head frame).
  out[offset] = af * cosH - al * sinH + along * cosV * cosH - bl * sinH - bu * sinV * cosH
  out[offset + 1] = af * sinH + al * cosH + along * cosV * sinH + bl * cosH - bu * sinV * sinH
  out[offset + 2] = au + along * sinV + bu * cosV
}
