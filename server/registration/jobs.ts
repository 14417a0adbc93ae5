import type pino from 'pino'
import { buildIcpTarget, type IcpTarget } from './icp'

/**
 * ICP refinements run in the server process, off the request (they yield to the event loop, see icp.ts),
 * one per scene: latest wins, so a new refinement in a scene aborts the one running there (it ends
 * 'cancelled') before it starts. Held scans' ICP targets (grid and lazily fitted normals) are kept for the
 * last few scans, since a person refines against the same held scan again and again.
 */

export class SupersededError extends Error {
  override readonly name = 'AbortError'
  constructor(message = 'a newer refinement in this scene replaced this one') {
    super(message)
  }
}

interface Running {
  registrationId: string
  controller: AbortController
  done: Promise<void>
}

export class RegistrationJobs {
  private readonly running = new Map<string, Running>()
  private readonly targets = new Map<string, Promise<IcpTarget>>()

  constructor(
    private readonly log: pino.Logger,
    private readonly maxTargets = 2,
  ) {}

  /** Starts `run` for the scene, aborting (and waiting for) whatever ran there before. */
  start(sceneId: string, registrationId: string, run: (signal: AbortSignal) => Promise<void>): void {
    const previous = this.running.get(sceneId)
    previous?.controller.abort(new SupersededError())
    const controller = new AbortController()
    const done = (async () => {
      if (previous) await previous.done
      if (controller.signal.aborted) return
      await run(controller.signal)
    })()
      .catch((err) => this.log.error({ err, registrationId }, 'a registration refinement failed'))
      .finally(() => {
        if (this.running.get(sceneId)?.controller === controller) this.running.delete(sceneId)
      })
    this.running.set(sceneId, { registrationId, controller, done })
  }

  /** Whether a refinement of this registration is running now. */
  isRunning(registrationId: string): boolean {
    return [...this.running.values()].some((r) => r.registrationId === registrationId)
  }

  /** Aborts the refinement of this registration, if one runs, and waits for it to end. */
  async cancel(registrationId: string, reason: string): Promise<void> {
    for (const r of this.running.values()) {
      if (r.registrationId !== registrationId) continue
      r.controller.abort(new SupersededError(reason))
      await r.done
    }
  }

  /** The ICP target of a held scan: built once from its points, kept for the last `maxTargets` scans. */
  target(key: string, points: () => Promise<Float64Array>): Promise<IcpTarget> {
    let found = this.targets.get(key)
    if (found) {
      this.targets.delete(key)
      this.targets.set(key, found)
      return found
    }
    found = points().then((p) => buildIcpTarget(p))
    found.catch(() => this.targets.delete(key))
    this.targets.set(key, found)
    while (this.targets.size > this.maxTargets) this.targets.delete(this.targets.keys().next().value!)
    return found
  }

  /** Resolves when nothing runs (tests). */
  async idle(): Promise<void> {
    while (this.running.size) await Promise.all([...this.running.values()].map((r) => r.done))
  }

  /** Aborts every refinement and waits for them (shutdown). */
  async stop(): Promise<void> {
    for (const r of this.running.values()) r.controller.abort(new SupersededError('the server stopped during the refinement; refine again'))
    await this.idle()
    this.targets.clear()
  }
}
