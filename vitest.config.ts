import { defineConfig } from 'vitest/config'

// Unit and integration tests. Browser tests live in test/e2e (npm run test:e2e),
// long fault-injection runs in test/soak (npm run test:soak).
export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    exclude: ['test/e2e/**', 'test/soak/**', 'node_modules/**'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
  },
})
