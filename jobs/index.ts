/**
 * The scheduled jobs. Each file defines one job: when it runs (from config) and what it starts.
 * Jobs only wire schedules to pipeline entry points; the work lives in src/.
 */
import type { JobDefinition } from '../src/schedule.ts'
import { inboxJob } from './inbox.ts'
import { ingestSourcesJob } from './ingest-sources.ts'
import { refitJob } from './refit.ts'
import { webhooksJob } from './webhooks.ts'

export const JOBS: readonly JobDefinition[] = [ingestSourcesJob, inboxJob, refitJob, webhooksJob]
