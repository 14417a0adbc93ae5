import { fitThrough } from '@shared/measure/clearance'
import { fittedMargin, fittedOpening, fittedOutline } from '@shared/measure/edges'
import { freeOpening } from '@shared/measure/opening'
import { concaveOutline } from '@shared/measure/polygon'
import { searchPassage, supportPoints } from '@shared/measure/orientation'
import { strayPoints } from '@shared/measure/strayPoints'
import { trimMask } from '@shared/measure/trims'
import { measureSizes } from '@shared/measure/sizes'

/**
 * The tasks a compute worker thread runs: the heavy functions of shared/measure, by name. Each runs as it is
 * (same arguments, same result); only the thread differs. To add one, import the function here, add it to
 * TASKS, and add an async wrapper with the same arguments to ./pool.ts.
 */
export const TASKS = {
  freeOpening,
  fittedOpening,
  fittedOutline,
  fitThrough,
  fittedMargin,
  concaveOutline,
  supportPoints,
  searchPassage,
  trimMask,
  strayPoints,
  measureSizes,
}

export type Tasks = typeof TASKS
export type TaskName = keyof Tasks

/** What the pool posts to a worker: a task's name and its arguments (typed arrays over shared memory pass without a copy). */
export interface TaskMessage {
  task: string
  args: unknown[]
}

/** The worker's entry (./worker.mjs calls it): runs one task and returns its result as plain data. */
export function runTask(message: TaskMessage): unknown {
  const fn = (TASKS as Record<string, (...args: unknown[]) => unknown>)[message.task]
  if (!fn) throw new Error(`no compute task named "${message.task}"`)
  return fn(...message.args)
}

/** A compute thread's entry when the server runs compiled (piscina calls the default export). */
export default runTask
