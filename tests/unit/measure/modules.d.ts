// Minimal types for two CommonJS reference libraries used only by these tests.
declare module 'monotone-convex-hull-2d' {
  /** Indices of the hull vertices of [x, y] points (clockwise, collinear points dropped). */
  function convexHull(points: number[][]): number[]
  export = convexHull
}

declare module 'robust-point-in-polygon' {
  /** -1 inside, 0 on the boundary, 1 outside (exact predicates). */
  function classifyPoint(loop: number[][], point: number[]): -1 | 0 | 1
  export = classifyPoint
}
