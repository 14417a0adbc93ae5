/**
 * Spherical to Cartesian in a right-handed frame with Z up.
 *
 * range r in metres; azimuth H in radians, anticlockwise from +x seen from above (+x towards +y);
 * elevation V in radians, up from the horizontal plane (+90 degrees is straight up):
 *   x = r cosV cosH,  y = r cosV sinH,  z = r sinV
 * (With a zenith angle z instead of an elevation, cosV = sin z and sinV = cos z.)
 * Writes x y z into out[offset..offset+2].
 */
export function sphericalToCartesian(
  range: number,
  azimuth: number,
  elevation: number,
  out: Float64Array | number[],
  offset = 0,
): void {
  const horizontal = range * Math.cos(elevation)
  out[offset] = horizontal * Math.cos(azimuth)
  out[offset + 1] = horizontal * Math.sin(azimuth)
  out[offset + 2] = range * Math.sin(elevation)
}
