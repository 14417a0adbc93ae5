#!/usr/bin/env node
// Compiles the server for production: server/index.ts (the web server), server/worker.ts (the ingest worker),
// server/compute/tasks.ts (a compute thread's entry), server/db/migrate-cli.ts and every migration, each bundled
// with the project's own code (the @shared paths resolved from tsconfig.json) into build/ at the same relative
// path, the packages left to node_modules. Run by `npm run build` after the client build; started with plain
// `node build/server/index.js` (no TypeScript loader at run time).
import fs from 'node:fs'
import path from 'node:path'
import { build } from 'esbuild'
import { root } from './lib/system.mjs'

const out = path.join(root, 'build')
fs.rmSync(out, { recursive: true, force: true })
const migrations = fs.readdirSync(path.join(root, 'migrations')).filter((f) => /^\d{14}_[\w-]+\.ts$/.test(f)).map((f) => `migrations/${f}`)
const entryPoints = ['server/index.ts', 'server/worker.ts', 'server/compute/tasks.ts', 'server/db/migrate-cli.ts', ...migrations]
const started = Date.now()
await build({
  absWorkingDir: root,
  entryPoints,
  outdir: out,
  outbase: '.',
  bundle: true,
  packages: 'external',
  platform: 'node',
  format: 'esm',
  target: 'node20',
  sourcemap: true,
  tsconfig: 'tsconfig.json',
  logLevel: 'warning',
})
console.log(`server compiled to build/ (${entryPoints.length} entries) in ${((Date.now() - started) / 1000).toFixed(1)} s`)
