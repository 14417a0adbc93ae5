#!/usr/bin/env node
// `npm test`: the same bootstrap as `npm start` with a throwaway PostgreSQL cluster, then the type check,
// the client build (the browser tests load it) and every vitest suite: unit, API, browser. Ends with the
// plain line `N passed, N failed` and exits non-zero on any failure.
import fs from 'node:fs'
import path from 'node:path'
import { spawn, spawnSync } from 'node:child_process'
import { ensureChromium, ensureNodeModules, fail, localBin, log, root } from './lib/system.mjs'
import { ensurePostgresInstalled, withThrowawayCluster } from './lib/postgres.mjs'

/** Runs a tool with its output shown, logs how long it took, and resolves to its exit code. */
function timed(name, cmd, args) {
  const started = Date.now()
  return new Promise((resolve) => {
    const child = spawn(cmd, args, { stdio: 'inherit', cwd: root })
    const done = (code) => {
      log(`${name} took ${((Date.now() - started) / 1000).toFixed(0)} s`)
      resolve(code)
    }
    child.on('error', () => done(1))
    child.on('exit', (code) => done(code ?? 1))
  })
}

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
      // The type check and the client build side by side: neither needs the other's output.
      const [tc, build] = await Promise.all([
        timed('type check', localBin('vue-tsc'), ['--noEmit', '-p', 'tsconfig.json']),
        timed('client build', localBin('vite'), ['build', '--logLevel', 'warn']),
      ])
      for (const [name, code] of [['type check', tc], ['client build', build]]) {
        if (code === 0) { passed++; log(`${name}: passed`) } else { failed++; log(`${name}: FAILED`) }
      }
    }

    const outDir = path.join(root, 'tests', 'output')
    fs.mkdirSync(outDir, { recursive: true })
    const report = path.join(outDir, 'vitest.json')
    fs.rmSync(report, { force: true })
    const args = ['run', '--reporter=default', '--reporter=json', `--outputFile.json=${report}`, ...process.argv.slice(2)]
    const vitestStarted = Date.now()
    const vt = spawnSync(localBin('vitest'), args, {
      stdio: 'inherit',
      cwd: root,
      env: { ...process.env, SPANMARK_ENV: 'test', TEST_DATABASE_ADMIN_URL: cluster.adminUrl },
    })
    vitestCode = vt.status ?? 1
    log(`vitest took ${((Date.now() - vitestStarted) / 1000).toFixed(0)} s`)
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
