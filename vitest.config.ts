import { defineConfig, mergeConfig } from 'vitest/config'
import viteConfig from './vite.config'

// The client's aliases and Vue plugin, plus the test settings.
export default mergeConfig(
  viteConfig,
  defineConfig({
    test: {
      include: ['tests/**/*.test.ts'],
      globalSetup: ['tests/utils/global-setup.ts'],
      testTimeout: 20_000,
      hookTimeout: 60_000,
      pool: 'forks',
      // Two files at a time even on two cores (vitest would take one there): most of a file's time is spent
      // waiting on PostgreSQL, the ingest worker or Chromium, not on the CPU.
      maxWorkers: 2,
    },
  }),
)
