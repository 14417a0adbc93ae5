import { spawn, type ChildProcess } from 'node:child_process'
import os from 'node:os'
import type pino from 'pino'
import type { Config } from '../config'
import { compiled, runnable } from '../paths'

/** The ingest worker's entry: its source under tsx, or its compiled file under plain node. */
const WORKER_ENTRY = runnable('server/worker.ts')

/** A worker process's name in `scans.claimed_by`. */
export function workerName(pid: number): string {
  return `${os.hostname()}:${pid}`
}

/**
 * Runs the ingest worker as a child process (its memory and any crash stay out of the web server) and
 * starts it again when it dies. The child gets the parent's exact configuration as JSON.
 */
export class WorkerSupervisor {
  private child: ChildProcess | null = null
  private stopping = false
  private restarts = 0

  constructor(
    private readonly config: Config,
    private readonly log: pino.Logger,
  ) {}

  get pid(): number | undefined {
    return this.child?.pid
  }

  /** How the running worker names itself when it claims a scan (`host:pid`, see `workerName`). */
  get claimName(): string | null {
    return this.child?.pid ? workerName(this.child.pid) : null
  }

  /** Kills a stalled worker; the exit handler starts a new one. */
  restart(): void {
    if (this.child && this.child.exitCode === null) this.child.kill('SIGKILL')
  }

  start(): void {
    this.stopping = false
    const child = spawn(process.execPath, [...(compiled ? [] : ['--import', 'tsx']), WORKER_ENTRY], {
      env: { ...process.env, SPANMARK_WORKER_CONFIG: JSON.stringify(this.config) },
      stdio: ['ignore', 'inherit', 'inherit'],
    })
    this.child = child
    child.on('exit', (code, signal) => {
      if (this.child === child) this.child = null
      if (this.stopping) return
      const delay = Math.min(5000, 250 * 2 ** this.restarts++)
      this.log.warn({ code, signal, delay }, 'ingest worker stopped; starting it again')
      setTimeout(() => !this.stopping && this.start(), delay).unref()
    })
    child.on('spawn', () => setTimeout(() => (this.restarts = 0), 10_000).unref())
  }

  async stop(): Promise<void> {
    this.stopping = true
    const child = this.child
    if (!child || child.exitCode !== null) return
    await new Promise<void>((resolve) => {
      const force = setTimeout(() => child.kill('SIGKILL'), 10_000)
      child.once('exit', () => {
        clearTimeout(force)
        resolve()
      })
      child.kill('SIGTERM')
    })
  }
}
