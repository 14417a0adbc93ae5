/** The npm `bunny` package (1.0.1) ships no types: vertex positions and triangle indices. */
declare module 'bunny' {
  const bunny: { positions: [number, number, number][]; cells: [number, number, number][] }
  export default bunny
}
