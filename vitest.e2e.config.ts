import { defineConfig } from 'vitest/config'

// Browser tests (npm run test:e2e): a real Chromium (Debian's /usr/bin/chromium, driven by
// playwright-core; never a downloaded browser) against the dashboard served on 127.0.0.1.
export default defineConfig({
  test: {
    include: ['test/e2e/**/*.test.ts'],
    testTimeout: 120_000,
    hookTimeout: 180_000,
    pool: 'forks',
    fileParallelism: false,
  },
})
