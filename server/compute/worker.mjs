// The entry of a compute worker thread (piscina loads it). Plain JavaScript on purpose: a worker thread does
// not inherit a loader in every host (vitest runs the server without one), so it registers tsx itself, with
// the project's tsconfig (the @shared paths), and then loads the TypeScript tasks.
import { register } from 'tsx/esm/api'

register({ tsconfig: new URL('../../tsconfig.json', import.meta.url).pathname })
const { runTask } = await import('./tasks.ts')

export default runTask
