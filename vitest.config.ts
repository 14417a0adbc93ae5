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
    },
  }),
)
