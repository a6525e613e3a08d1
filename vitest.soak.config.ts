import { defineConfig } from 'vitest/config'

// Long fault-injection and load runs (npm run test:soak): many SIGKILLs per stage, an expiring lock
// lease, the dashboard under 200 requests/s for 60 s, large hostile inputs. One file at a time, so
// that the load test and the crash timings do not compete with each other.
export default defineConfig({
  test: {
    include: ['test/soak/**/*.test.ts'],
    testTimeout: 1_800_000,
    hookTimeout: 600_000,
    pool: 'forks',
    fileParallelism: false,
  },
})
