import { pathToFileURL } from 'node:url'
import Piscina from 'piscina'
import { compiled, runnable } from '../paths'
import { defaultComputeThreads, type Config } from '../config'
import { TASKS, type TaskMessage, type TaskName, type Tasks } from './tasks'

/**
 * Heavy marker computations (free openings, edge fits, object outlines, clearance fits) run here, in worker
 * threads, so the server's event loop keeps answering requests while a check of a million-point object runs.
 * piscina keeps the threads; each thread loads ./worker.mjs, which loads ./tasks.ts.
 *
 * `compute.<name>(...)` takes the same arguments as the shared/measure function of that name and resolves to
 * its result. Point arrays cross without a copy when they lie in shared memory (`sharedFloat64Array`); a large
 * typed array that does not is copied into shared memory once, here. Results come back as plain data.
 *
 * One pool per process, opened by each server (`openComputePool`, size `config.compute.threads`) and
 * destroyed when the last one closes; used without being opened (a unit test), it starts with the default
 * size and `closeComputePool` ends it.
 */

/** threads: worker threads at most; idleTimeoutMs: an idle thread ends after this long (a task starts one again). */
export type ComputePoolOptions = Config['compute']

/** A task that threw (or whose thread died): the task's name and the worker's message. */
export class ComputeTaskError extends Error {
  constructor(
    readonly task: string,
    readonly detail: string,
  ) {
    super(`the computation "${task}" failed: ${detail}`)
    this.name = 'ComputeTaskError'
  }
}

/** The thread's entry: worker.mjs (which registers tsx for the sources), or the compiled tasks under plain node. */
const WORKER_ENTRY = compiled ? pathToFileURL(runnable('server/compute/tasks.ts')).href : new URL('./worker.mjs', import.meta.url).href
/** Typed arrays at least this large go to shared memory rather than being copied by postMessage. */
const SHARE_BYTES = 64 * 1024

let options: ComputePoolOptions = { threads: defaultComputeThreads(), idleTimeoutMs: 30_000 }
let pool: Piscina | null = null
let openers = 0
/** Test seam: a task answered by another module's export (a deliberately slow or throwing one). */
const routes = new Map<string, { filename: string; name: string }>()

function thePool(): Piscina {
  pool ??= new Piscina({
    filename: WORKER_ENTRY,
    minThreads: 0,
    maxThreads: options.threads,
    idleTimeout: options.idleTimeoutMs,
    // The entry registers its own TypeScript loader; a host's flags (tsx's, vitest's) are not needed there.
    execArgv: [],
  })
  return pool
}

/** A server's hold on the pool; the pool ends when the last hold is closed. */
export function openComputePool(wanted: ComputePoolOptions): { close(): Promise<void> } {
  if (!(Number.isInteger(wanted.threads) && wanted.threads >= 1)) throw new Error(`compute threads must be a whole number of at least 1, not ${wanted.threads}`)
  if (openers === 0 && !pool) options = { ...wanted }
  openers++
  let closed = false
  return {
    close: async () => {
      if (closed) return
      closed = true
      if (--openers === 0) await closeComputePool()
    },
  }
}

/** Ends the threads now; queued and running tasks fail. The next task starts a new pool. */
export async function closeComputePool(): Promise<void> {
  const p = pool
  pool = null
  await p?.destroy()
}

/** Threads running and tasks waiting (diagnostics, tests). */
export function computePoolStats(): { threads: number; queued: number; maxThreads: number } {
  return { threads: pool?.threads.length ?? 0, queued: pool?.queueSize ?? 0, maxThreads: options.threads }
}

let inline = false

/**
 * The bench's comparison only (`npm run bench -- --only pool`): run every task on the calling thread, as the
 * checks did before the pool, to measure what the event loop suffers then.
 */
export function setComputeInline(on: boolean): void {
  inline = on
}

/** Test seam: answer `task` with `name` exported by `filename` (a file: URL or path), or restore it (null). */
export function routeComputeTask(task: TaskName, to: { filename: string; name: string } | null): void {
  if (to) routes.set(task, to)
  else routes.delete(task)
}

/** A Float64Array in shared memory: handed to a worker thread without a copy. */
export function sharedFloat64Array(length: number): Float64Array {
  return new Float64Array(new SharedArrayBuffer(length * Float64Array.BYTES_PER_ELEMENT))
}

type Typed = Float64Array | Float32Array | Uint8Array | Int32Array | Uint32Array

function share<T>(value: T, depth = 0): T {
  if (ArrayBuffer.isView(value) && !(value instanceof DataView)) {
    const a = value as unknown as Typed
    if (a.buffer instanceof SharedArrayBuffer || a.byteLength < SHARE_BYTES) return value
    const Ctor = a.constructor as new (b: SharedArrayBuffer) => Typed
    const copy = new Ctor(new SharedArrayBuffer(a.byteLength))
    copy.set(a as never)
    return copy as unknown as T
  }
  // One level into plain objects: a FreeOpening carries its section's points and region.
  if (depth === 0 && value && typeof value === 'object' && Object.getPrototypeOf(value) === Object.prototype) {
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, share(v, 1)])) as T
  }
  return value
}

async function runTask(task: TaskName, args: unknown[]): Promise<unknown> {
  if (inline) return (TASKS[task] as (...a: unknown[]) => unknown)(...args)
  const route = routes.get(task)
  const message: TaskMessage = { task, args: args.map((a) => share(a)) }
  try {
    return await thePool().run(route ? message.args : message, route ?? {})
  } catch (err) {
    throw new ComputeTaskError(task, err instanceof Error ? err.message : String(err))
  }
}

type InPool<F extends (...args: never[]) => unknown> = (...args: Parameters<F>) => Promise<ReturnType<F>>

/** The shared/measure functions of ./tasks.ts, each run in the pool: same arguments, the result resolved. */
export const compute = Object.fromEntries(
  (Object.keys(TASKS) as TaskName[]).map((task) => [task, (...args: unknown[]) => runTask(task, args)]),
) as { [K in TaskName]: InPool<Tasks[K]> }
