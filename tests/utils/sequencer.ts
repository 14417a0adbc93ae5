import os from 'node:os'
import path from 'node:path'
import fs from 'node:fs'
import { BaseSequencer, type TestSpecification } from 'vitest/node'
import { planOrder } from './plan'

/**
 * The order files start in, planned so the browser lane never waits: one browser file runs at a time
 * (tests/utils/browserLane.ts), so a worker that picks a browser file while another runs sits idle, and a lane
 * left idle while the workers go through API files puts the browser files end to end at the back. The plan
 * plays the run through with each file's seconds from the last full run (`fileSeconds.json`, written by
 * `npm run test:timings`; a file not in it counts 40 s in the browser lane, 5 s elsewhere): whenever a worker
 * comes free, it takes the next browser file if the lane is free by then, else the longest other file (when
 * another worker comes free by the time the lane does), else the longest that ends before the lane frees, else
 * the shortest. The workers then take files in that order (tests/utils/plan.ts).
 */
const SECONDS: Record<string, number> = (() => {
  try {
    return JSON.parse(fs.readFileSync(path.resolve('tests/utils/fileSeconds.json'), 'utf8')) as Record<string, number>
  } catch {
    return {}
  }
})()

const isBrowser = (f: TestSpecification) => /[\\/]tests[\\/]e2e[\\/]/.test(f.moduleId)
const secondsOf = (f: TestSpecification) => SECONDS[path.relative(process.cwd(), f.moduleId).split(path.sep).join('/')] ?? (isBrowser(f) ? 40 : 5)

/** The same worker count as vitest.config.ts. */
const workerCount = () => Number(process.env.SPANMARK_TEST_WORKERS) || Math.max(2, os.availableParallelism() - 1)

export class PlannedLaneSequencer extends BaseSequencer {
  override async sort(files: TestSpecification[]): Promise<TestSpecification[]> {
    const sorted = await super.sort(files)
    if (!sorted.some(isBrowser)) return sorted
    return planOrder(sorted, isBrowser, secondsOf, workerCount())
  }
}
