#!/usr/bin/env node
// `npm run bench`: the speed and memory targets of DEVELOPERS.md ("Targets"), on a throwaway PostgreSQL cluster.
// Arguments go to bench/index.ts (`--sizes 1e6` for a quick run; the default is 1 M and 10 M points).
import { spawnSync } from 'node:child_process'
import { ensureChromium, ensureNodeModules, fail, localBin, root, run } from './lib/system.mjs'
import { ensurePostgresInstalled, withThrowawayCluster } from './lib/postgres.mjs'

async function main() {
  ensureNodeModules()
  const bin = ensurePostgresInstalled()
  ensureChromium()
  // The viewer bench opens the built client in Chromium.
  run(localBin('vite'), ['build', '--logLevel', 'warn'])
  const code = await withThrowawayCluster(bin, 'spanmark_bench', async (cluster) => {
    const r = spawnSync(localBin('tsx'), ['bench/index.ts', ...process.argv.slice(2)], {
      stdio: 'inherit',
      cwd: root,
      env: { ...process.env, BENCH_DATABASE_URL: cluster.url, NODE_OPTIONS: '--max-old-space-size=8192' },
    })
    return r.status ?? 1
  })
  process.exit(code)
}

main().catch((err) => fail(err instanceof Error ? err.message : String(err)))
