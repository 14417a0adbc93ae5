#!/usr/bin/env node
// `npm test`: the same bootstrap as `npm start` with a throwaway PostgreSQL cluster, then the type check,
// the client build (the browser tests load it) and every vitest suite: unit, API, browser. Ends with the
// plain line `N passed, N failed` and exits non-zero on any failure.
import fs from 'node:fs'
import path from 'node:path'
import { spawnSync } from 'node:child_process'
import { ensureChromium, ensureNodeModules, fail, localBin, log, root } from './lib/system.mjs'
import { ensurePostgresInstalled, withThrowawayCluster } from './lib/postgres.mjs'

async function main() {
  const started = Date.now()
  ensureNodeModules()
  const bin = ensurePostgresInstalled()
  ensureChromium()

  let passed = 0
  let failed = 0
  let vitestCode = 1
  await withThrowawayCluster(bin, 'spanmark_test', async (cluster) => {
    // SPANMARK_QUICK=1 (a contributor re-running one file) skips the type check and the client build.
    if (process.env.SPANMARK_QUICK === '1') log('quick run: type check and client build skipped')
    else {
      const tc = spawnSync(localBin('vue-tsc'), ['--noEmit', '-p', 'tsconfig.json'], { stdio: 'inherit', cwd: root })
      if (tc.status === 0) { passed++; log('type check: passed') } else { failed++; log('type check: FAILED') }

      const build = spawnSync(localBin('vite'), ['build', '--logLevel', 'warn'], { stdio: 'inherit', cwd: root })
      if (build.status === 0) { passed++; log('client build: passed') } else { failed++; log('client build: FAILED') }
    }

    const outDir = path.join(root, 'tests', 'output')
    fs.mkdirSync(outDir, { recursive: true })
    const report = path.join(outDir, 'vitest.json')
    fs.rmSync(report, { force: true })
    const args = ['run', '--reporter=default', '--reporter=json', `--outputFile.json=${report}`, ...process.argv.slice(2)]
    const vt = spawnSync(localBin('vitest'), args, {
      stdio: 'inherit',
      cwd: root,
      env: { ...process.env, SPANMARK_ENV: 'test', TEST_DATABASE_ADMIN_URL: cluster.adminUrl },
    })
    vitestCode = vt.status ?? 1
    if (fs.existsSync(report)) {
      const r = JSON.parse(fs.readFileSync(report, 'utf8'))
      passed += r.numPassedTests
      failed += r.numFailedTests
      // A suite that fails outside its tests (it does not load, a hook throws) has no failed test to count.
      failed += r.testResults.filter((t) => t.status === 'failed' && !t.assertionResults.some((a) => a.status === 'failed')).length
    } else {
      failed++
    }
  })
  log(`finished in ${((Date.now() - started) / 1000).toFixed(0)} s`)
  process.stdout.write(`${passed} passed, ${failed} failed\n`)
  process.exit(failed > 0 || vitestCode !== 0 ? 1 : 0)
}

main().catch((err) => fail(err instanceof Error ? err.message : String(err)))
