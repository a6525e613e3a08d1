/**
 * @module ingest/config
 * The `ingest`, `sources` and `webhooks` sections of tides.config.json.
 *
 * A source: `{ "id": "city-jobs", "kind": "feed", "location": "https://...", "schedule": "0 * * * *",
 * "options": {} }`. Kinds: `feed` (RSS 2.0 or Atom, URL or file), `jsonl` (schema.org JobPosting JSON
 * Lines, URL or file), `requests` (request log, CSV or JSON Lines, URL or file), `folder` (an inbox
 * folder: each file dropped there is ingested once, then moved to processed/ or rejected/).
 * Options: `format` ("csv" | "jsonl") for a `requests` source whose location does not end in .csv or
 * .jsonl; `documents` ("postings" | "requests") for what a folder's .jsonl files hold (default
 * postings; .csv files are always requests, .xml/.rss/.atom always feeds).
 */
import { z } from 'zod'

export const sourceOptionsSchemas = {
  feed: z.object({}).strict(),
  jsonl: z.object({}).strict(),
  requests: z.object({ format: z.enum(['csv', 'jsonl']).optional() }).strict(),
  folder: z.object({ documents: z.enum(['postings', 'requests']).default('postings') }).strict(),
} as const

export type FolderOptions = z.infer<typeof sourceOptionsSchemas.folder>
export type RequestsOptions = z.infer<typeof sourceOptionsSchemas.requests>

export const sourceSchema = z
  .object({
    id: z.string().regex(/^[a-z0-9][a-z0-9._-]*$/i, 'source id: letters, digits, dot, dash, underscore'),
    kind: z.enum(['feed', 'jsonl', 'requests', 'folder']),
    /** http(s) URL or local path (a folder for kind folder) */
    location: z.string().min(1),
    /** node-cron expression; omitted = only on demand (and, for folders, when a file appears) */
    schedule: z.string().optional(),
    options: z.record(z.string(), z.unknown()).prefault({}),
  })
  .strict()
  .superRefine((s, ctx) => {
    const parsed = sourceOptionsSchemas[s.kind].safeParse(s.options)
    if (!parsed.success) {
      for (const issue of parsed.error.issues) {
        const keys = 'keys' in issue && Array.isArray(issue.keys) ? ` ${issue.keys.map((k) => `"${k}"`).join(', ')}` : ''
        ctx.addIssue({ code: 'custom', path: ['options', ...issue.path.map(String)], message: issue.code === 'unrecognized_keys' ? `unknown option${keys} for a ${s.kind} source` : issue.message })
      }
    }
    const scheme = /^([a-z][a-z0-9+.-]*):\/\//i.exec(s.location)?.[1]?.toLowerCase()
    if (scheme && scheme !== 'http' && scheme !== 'https') ctx.addIssue({ code: 'custom', path: ['location'], message: `only http(s) URLs or local paths, not ${scheme}:` })
    if (s.kind === 'folder' && scheme) ctx.addIssue({ code: 'custom', path: ['location'], message: 'a folder source needs a local folder path' })
  })

export const ingestConfigSchema = z
  .object({
    /** per-request deadline for a whole response (a server that trickles bytes is cut too) */
    timeoutMs: z.number().int().positive().default(15_000),
    /** bodies larger than this (after decompression) are cut; the complete items before the cut are kept */
    maxBytes: z.number().int().positive().default(20 * 1024 * 1024),
    maxRedirects: z.number().int().min(0).max(10).default(3),
    /** retries after the first attempt, on 5xx, 429, timeouts and network errors */
    retries: z.number().int().min(0).max(10).default(3),
    /** first retry waits this long, each next one twice as long */
    backoffMs: z.number().int().min(0).default(500),
    /**
     * documents per transaction: larger batches rewrite the (randomly keyed) dedupe indexes less
     * often, and read what is stored for their candidates in one sorted pass (dedupe.ts prefetch);
     * 5,000 wrote 2.4 times fewer bytes than 1,000 on the demo's 90,000 documents, and 10,000 new
     * postings went into the 1M benchmark database in 3.8-3.9 s in one batch against 4.0-4.1 s in two
     */
    batchSize: z.number().int().positive().default(10_000),
    /**
     * JSON Lines files with at least this many bytes left to read are read, parsed and analysed
     * (text hash, shingles, MinHash) on a second thread while the main thread stores; `tides
     * import` also checks them on both threads (0 = always; null = never). The default, 64 MiB
     * (about 30,000 postings), leaves smaller files on one thread: measured into the N = 100,000
     * benchmark database on a quiet 2-core machine, 10,000 new postings (22 MB) took 3.7 s on one
     * thread and 4.1-4.6 s with the worker (its start, loading and compiling the modules again, costs
     * more than it saves), 40,000 (91 MB) 9.1 s on one thread and 8.2-9.4 s with it; larger files
     * (the ingest benchmark's 150 MB) use it. It costs about a tenth more CPU in all (results are copied between
     * threads) and takes parsing and hashing, about 40 % of the work, off the thread that writes.
     */
    parseWorkerMinBytes: z.number().int().min(0).nullable().default(64 * 1024 * 1024),
    /** a title plus description longer than this is rejected (with the reason), not cut */
    maxTextChars: z.number().int().positive().default(100_000),
    dedupe: z
      .object({
        /** Jaccard similarity of word shingles at or above which a posting is a repost */
        threshold: z.number().min(0.5).max(1).default(0.9),
        /** MinHash signature length k; the estimate's standard error is at most 1/(2 sqrt k) */
        numHashes: z.number().int().min(16).max(512).default(60),
        /**
         * LSH bands b (k/b rows each): a pair becomes a candidate with probability 1-(1-J^r)^b;
         * with k=60, b=10 that is 0.9995 at J=0.9 and 0.15 at J=0.5 (candidates are then verified)
         */
        bands: z.number().int().min(1).default(10),
        /** words per shingle */
        shingleSize: z.number().int().min(1).max(8).default(4),
      })
      .strict()
      .prefault({})
      .refine((d) => d.numHashes % d.bands === 0, { message: 'numHashes must be a multiple of bands', path: ['bands'] }),
  })
  .strict()

export type IngestConfig = z.infer<typeof ingestConfigSchema>

export const webhookSchema = z
  .object({
    url: z.string().url().refine((u) => /^https?:\/\//i.test(u), 'webhook url must be http(s)'),
    /** HMAC-SHA256 key; the signature goes in the X-Tides-Signature header as sha256=<hex> */
    secret: z.string().min(8),
    /** event types to deliver; empty = all */
    events: z.array(z.string()).default([]),
    /** deadline per delivery attempt */
    timeoutMs: z.number().int().positive().default(5_000),
    /** attempts before a delivery is marked failed */
    maxAttempts: z.number().int().min(1).max(100).default(12),
    /** wait after the first failed attempt; doubles after each next one, up to maxBackoffMs */
    backoffMs: z.number().int().min(0).default(2_000),
    maxBackoffMs: z.number().int().min(0).default(3_600_000),
  })
  .strict()

export type WebhookConfig = z.infer<typeof webhookSchema>
