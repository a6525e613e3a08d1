/**
 * Nightly: re-estimate abilities (stale estimates age) and re-plan, even when no new documents came.
 */
import type { JobDefinition } from '../src/schedule.ts'

export const refitJob: JobDefinition = {
  name: 'nightly',
  tasks: () => [{ name: 'nightly:ability', cron: '15 2 * * *', stages: ['ability'], options: {} }],
}
