/**
 * One schedule per configured source with a `schedule`: ingest that source, then let events ripple
 * (map, fit, plan). node-cron's noOverlap keeps a slow fetch from stacking up.
 */
import type { JobDefinition } from '../src/schedule.ts'

export const ingestSourcesJob: JobDefinition = {
  name: 'ingest',
  tasks: (config) =>
    config.sources
      .filter((s) => s.schedule)
      .map((s) => ({ name: `ingest:${s.id}`, cron: s.schedule!, stages: ['ingest'], options: { source: s.id } })),
}
