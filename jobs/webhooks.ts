/**
 * Every minute, when webhooks are configured: queue new outbox events and retry due deliveries
 * (deliveries also go out right after each pipeline run; this catches the retries).
 */
import { deliverWebhooks } from '../src/events/webhooks.ts'
import type { JobDefinition } from '../src/schedule.ts'

export const webhooksJob: JobDefinition = {
  name: 'webhooks',
  tasks: (config) =>
    config.webhooks.length === 0
      ? []
      : [
          {
            name: 'webhooks:deliver',
            cron: '* * * * *',
            stages: [],
            options: {},
            run: async (db, cfg, log) => {
              const r = await deliverWebhooks(db, cfg, { log, budgetMs: 50_000 })
              return r.attempted ? `${r.delivered} delivered, ${r.retrying} to retry, ${r.failed} given up` : ''
            },
          },
        ],
}
