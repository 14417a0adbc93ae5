// Plain Node helpers for the start and test scripts. No dependencies: on a fresh machine nothing from
// node_modules exists yet when these run.
import { spawn, spawnSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'

export const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..')

export function log(message) {
  process.stdout.write(`[spanmark] ${message}\n`)
}

export function fail(message) {
  process.stderr.write(`[spanmark] ${message}\n`)
  process.exit(1)
}

/** Runs a command to completion, inheriting the terminal; throws with the command line on failure. */
export function run(cmd, args, opts = {}) {
  const r = spawnSync(cmd, args, { stdio: 'inherit', cwd: root, ...opts })
  if (r.error) throw new Error(`${cmd} ${args.join(' ')}: ${r.error.message}`)
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} exited with ${r.status}`)
}

/** Runs a command and returns its trimmed stdout, or null when it fails. */
export function capture(cmd, args, opts = {}) {
  const r = spawnSync(cmd, args, { encoding: 'utf8', cwd: root, ...opts })
  if (r.error || r.status !== 0) return null
  return r.stdout.trim()
}

export function isRoot() {
  return typeof process.getuid === 'function' && process.getuid() === 0
}

let aptUpdated = false
/** Installs Debian packages (as root, without a terminal). */
export function aptInstall(packages) {
  if (!isRoot()) fail(`${packages.join(', ')} missing: install ${packages.join(' ')} with apt-get (needs root), then run again.`)
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  if (!aptUpdated) {
    log('apt-get update')
    run('apt-get', ['update', '-q'], { env })
    aptUpdated = true
  }
  log(`apt-get install ${packages.join(' ')}`)
  run('apt-get', ['install', '-y', '-q', '--no-install-recommends', ...packages], { env })
}

/** npm ci when node_modules is missing or older than the lock file. */
export function ensureNodeModules() {
  const lock = path.join(root, 'package-lock.json')
  const marker = path.join(root, 'node_modules', '.package-lock.json')
  const stale = !fs.existsSync(marker) || fs.statSync(marker).mtimeMs < fs.statSync(lock).mtimeMs
  if (!stale) return
  log('installing npm dependencies (npm ci)')
  run('npm', ['ci', '--no-audit', '--no-fund'])
}

/** Starts a long-running child in its own process group so that a signal reaches all of it. */
export function startChild(cmd, args, opts = {}) {
  return spawn(cmd, args, { stdio: 'inherit', cwd: root, detached: false, ...opts })
}

export function localBin(name) {
  return path.join(root, 'node_modules', '.bin', name)
}

/** Debian's Chromium, for the browser tests and the viewer bench. */
export function ensureChromium() {
  if (fs.existsSync('/usr/bin/chromium')) return
  log('Chromium is not installed: installing it from Debian packages (for the browser tests)')
  aptInstall(['chromium'])
}
