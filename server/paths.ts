import fs from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'

/**
 * Where things are, whether the server runs from its TypeScript sources (tsx, vitest) or from the compiled
 * output of `npm run build` (plain node on build/server/...): the project's root is the nearest folder up from
 * this module that holds package.json; compiled code is JavaScript, so its own file name ends in .js.
 */
const here = fileURLToPath(import.meta.url)

function findRoot(from: string): string {
  for (let dir = path.dirname(from); ; dir = path.dirname(dir)) {
    if (fs.existsSync(path.join(dir, 'package.json'))) return dir
    if (path.dirname(dir) === dir) throw new Error(`no package.json above ${from}`)
  }
}

export const projectRoot = findRoot(here)
/** Running the compiled output (build/), not the sources. */
export const compiled = here.endsWith('.js')
/** The compiled server's folder (build/ under the root). */
export const buildDir = path.join(projectRoot, 'build')

/** A source file's path, or its compiled counterpart under build/ (`server/worker.ts` -> `build/server/worker.js`). */
export function runnable(sourcePath: string): string {
  return compiled ? path.join(buildDir, sourcePath.replace(/\.ts$/, '.js')) : path.join(projectRoot, sourcePath)
}
