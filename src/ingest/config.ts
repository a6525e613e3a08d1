/**
 * @module ingest/config
 * The `ingest`, `sources` and `webhooks` sections of tides.config.json.
 */
import { z } from 'zod'

export const sourceSchema = z
  .object({
    id: z.string().regex(/^[a-z0-9][a-z0-9._-]*$/i, 'source id: letters, digits, dot, dash, underscore'),
    kind: z.enum(['feed', 'jsonl', 'requests', 'folder']),
    location: z.string().min(1),
    /** node-cron expression; omitted = only on demand */
    schedule: z.string().optional(),
    options: z.record(z.string(), z.unknown()).prefault({}),
  })
  .strict()

export const ingestConfigSchema = z
  .object({
    /** per-request timeout for feed fetches */
    timeoutMs: z.number().int().positive().default(15_000),
    /** bodies larger than this are cut and the source run fails with a clear error */
    maxBytes: z.number().int().positive().default(20 * 1024 * 1024),
    maxRedirects: z.number().int().min(0).max(10).default(3),
    retries: z.number().int().min(0).max(10).default(3),
    backoffMs: z.number().int().min(0).default(500),
    /** documents per transaction */
    batchSize: z.number().int().positive().default(1000),
    dedupe: z
      .object({
        /** Jaccard similarity at or above which a document is a repost */
        threshold: z.number().min(0.5).max(1).default(0.9),
        numHashes: z.number().int().min(16).max(512).default(64),
        bands: z.number().int().min(1).default(16),
        shingleSize: z.number().int().min(1).max(8).default(4),
      })
      .strict()
      .prefault({}),
  })
  .strict()

export const webhookSchema = z
  .object({
    url: z.string().url(),
    secret: z.string().min(8),
    /** event types to deliver; empty = all */
    events: z.array(z.string()).default([]),
  })
  .strict()
