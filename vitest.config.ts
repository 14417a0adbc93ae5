import os from 'node:os'
import { defineConfig, mergeConfig } from 'vitest/config'
import viteConfig from './vite.config'
import { PlannedLaneSequencer } from './tests/utils/sequencer'

// The client's aliases and Vue plugin, plus the test settings.
export default mergeConfig(
  viteConfig,
  defineConfig({
    test: {
      include: ['tests/**/*.test.ts'],
      globalSetup: ['tests/utils/global-setup.ts'],
      // Generous: two files run at once on two cores, and a CPU-heavy test (an orientation search, a browser
      // step) may wait its turn; a test that needs longer says so itself.
      testTimeout: 60_000,
      hookTimeout: 120_000,
      pool: 'forks',
      // At least two files at once, even on two cores: most files wait on their servers, PostgreSQL and the
      // ingest worker more than they compute. Browser files take turns (tests/utils/browserLane.ts) and are
      // planned so the browser lane never waits (tests/utils/sequencer.ts). SPANMARK_TEST_WORKERS overrides.
      maxWorkers: Number(process.env.SPANMARK_TEST_WORKERS) || Math.max(2, os.availableParallelism() - 1),
      sequence: { sequencer: PlannedLaneSequencer },
    },
  }),
)
