import { BaseSequencer, type TestSpecification } from 'vitest/node'

/**
 * The order files start in: the browser files spread evenly among the others, longest first in each list
 * (vitest's own order: failed and slow files first, from the last run's timings when it has them). One browser
 * file runs at a time (tests/utils/browserLane.ts), so a worker that picks the next browser file while one is
 * running waits; spreading them lets the other worker go through API and unit files meanwhile.
 */
export class SpreadBrowserFiles extends BaseSequencer {
  override async sort(files: TestSpecification[]): Promise<TestSpecification[]> {
    const sorted = await super.sort(files)
    const isBrowser = (f: TestSpecification) => /[\\/]tests[\\/]e2e[\\/]/.test(f.moduleId)
    const browser = sorted.filter(isBrowser)
    const rest = sorted.filter((f) => !isBrowser(f))
    if (browser.length === 0) return sorted
    const per = Math.ceil(rest.length / browser.length)
    const out: TestSpecification[] = []
    browser.forEach((b, i) => out.push(b, ...rest.slice(i * per, (i + 1) * per)))
    return out
  }
}
