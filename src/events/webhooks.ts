/**
 * @module events/webhooks
 * Delivers outbox events to the configured webhook URLs, at least once each.
 *
 * Each endpoint is a consumer with its own cursor: new events (of the types it wants) are queued as
 * `webhook_deliveries` rows in one transaction with the cursor move, so none is skipped or queued
 * twice. A delivery is a POST of `{"id","type","createdAt","payload"}` as JSON with
 * `X-Tides-Signature: sha256=<hex HMAC-SHA256 of the exact body bytes, keyed with the secret>`
 * (the scheme of RFC 2104 HMAC over the raw body, common practice for webhooks), plus
 * `X-Tides-Event` and `X-Tides-Delivery` (the event id, for receivers to drop repeats). A 2xx answer
 * marks it delivered; anything else schedules a retry after backoffMs·2^(attempts-1) (capped), and
 * after maxAttempts it is marked failed. An endpoint that cannot be reached is left for the next
 * pass after one try, so a dead endpoint costs one timeout per pass and never blocks ingestion
 * (the pipeline's work has committed before delivery starts).
 */
import crypto from 'node:crypto'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { type DeliveryRow, claimDelivery, dueDeliveries, markAttemptFailed, markDelivered, queueDeliveries } from '../db/documents.ts'
import { eventsAfter, getCursor, latestEventId, setCursor } from '../db/events.ts'
import type { WebhookConfig } from '../ingest/config.ts'

export const SIGNATURE_HEADER = 'X-Tides-Signature'

/** `sha256=<hex>` HMAC-SHA256 of the body with the secret. */
export function signBody(secret: string, body: string | Buffer): string {
  return `sha256=${crypto.createHmac('sha256', secret).update(body).digest('hex')}`
}

/**
 * Checks a received signature in constant time (for receivers and tests).
 * @example verifySignature('s3cret-key', '{}', signBody('s3cret-key', '{}')) // => true
 */
export function verifySignature(secret: string, body: string | Buffer, header: string | null | undefined): boolean {
  if (!header) return false
  const expected = Buffer.from(signBody(secret, body))
  const got = Buffer.from(header)
  return expected.length === got.length && crypto.timingSafeEqual(expected, got)
}

export interface DeliveryReport {
  queued: number
  attempted: number
  delivered: number
  retrying: number
  /** gave up after maxAttempts */
  failed: number
}

export interface DeliverOptions {
  now?: () => number
  /** stop starting new attempts after this long (default 15 s) */
  budgetMs?: number
  log?: (m: string) => void
}

function consumer(url: string): string {
  return `webhook:${url}`
}

/** Queues every event an endpoint has not seen yet; returns how many were queued. */
export function queueNewEvents(db: Db, hooks: readonly WebhookConfig[], nowIso: string): number {
  let queued = 0
  db.transaction(() => {
    for (const hook of hooks) {
      let after = getCursor(db, consumer(hook.url))
      for (;;) {
        const events = eventsAfter(db, after, hook.events, 1000)
        if (events.length === 0) break
        queued += queueDeliveries(db, hook.url, events.map((e) => e.id), nowIso)
        after = events[events.length - 1]!.id
      }
      // the cursor also moves past events of types this endpoint does not want
      setCursor(db, consumer(hook.url), Math.max(after, latestEventId(db)))
    }
  }).immediate()
  return queued
}

/** The body sent for one event. */
export function deliveryBody(row: Pick<DeliveryRow, 'event_id' | 'type' | 'created_at' | 'payload_json'>): string {
  return JSON.stringify({ id: row.event_id, type: row.type, createdAt: row.created_at, payload: JSON.parse(row.payload_json) as unknown })
}

async function attempt(hook: WebhookConfig, row: DeliveryRow): Promise<{ ok: true } | { ok: false; error: string; unreachable: boolean }> {
  const body = deliveryBody(row)
  try {
    const res = await fetch(hook.url, {
      method: 'POST',
      body,
      redirect: 'manual',
      signal: AbortSignal.timeout(hook.timeoutMs),
      headers: {
        'Content-Type': 'application/json',
        'User-Agent': 'skill-tides/0.1 (webhooks)',
        'X-Tides-Event': row.type,
        'X-Tides-Delivery': String(row.event_id),
        [SIGNATURE_HEADER]: signBody(hook.secret, body),
      },
    })
    await res.arrayBuffer().catch(() => undefined)
    if (res.status >= 200 && res.status < 300) return { ok: true }
    return { ok: false, error: `HTTP ${res.status}`, unreachable: false }
  } catch (err) {
    const e = err as Error & { cause?: { code?: string; message?: string } }
    const reason = e.name === 'TimeoutError' ? `timed out after ${hook.timeoutMs} ms` : (e.cause?.code ?? e.cause?.message ?? e.message)
    return { ok: false, error: reason, unreachable: true }
  }
}

/**
 * One delivery pass: queue new events, then try every due delivery once.
 * Never throws for an endpoint's failure; the report says what happened.
 */
export async function deliverWebhooks(db: Db, config: Pick<Config, 'webhooks'>, opts: DeliverOptions = {}): Promise<DeliveryReport> {
  const report: DeliveryReport = { queued: 0, attempted: 0, delivered: 0, retrying: 0, failed: 0 }
  if (config.webhooks.length === 0) return report
  const now = opts.now ?? Date.now
  const deadline = now() + (opts.budgetMs ?? 15_000)
  report.queued = queueNewEvents(db, config.webhooks, new Date(now()).toISOString())
  const due = dueDeliveries(db, new Date(now()).toISOString(), 1000)
  const byEndpoint = new Map<string, DeliveryRow[]>()
  for (const row of due) byEndpoint.set(row.endpoint, [...(byEndpoint.get(row.endpoint) ?? []), row])
  await Promise.all(
    [...byEndpoint].map(async ([url, rows]) => {
      const hook = config.webhooks.find((h) => h.url === url)
      if (!hook) return // endpoint removed from the config: its rows wait, unsent
      for (const row of rows) {
        if (now() > deadline) return
        if (!claimDelivery(db, row.event_id, url, new Date(now()).toISOString(), new Date(now() + hook.timeoutMs + 5_000).toISOString())) continue
        report.attempted++
        const r = await attempt(hook, row)
        const at = new Date(now()).toISOString()
        if (r.ok) {
          markDelivered(db, row.event_id, url, at)
          report.delivered++
          continue
        }
        const attempts = row.attempts + 1
        const giveUp = attempts >= hook.maxAttempts
        const wait = Math.min(hook.backoffMs * 2 ** (attempts - 1), hook.maxBackoffMs)
        markAttemptFailed(db, row.event_id, url, r.error, giveUp ? null : new Date(now() + wait).toISOString())
        if (giveUp) {
          report.failed++
          opts.log?.(`webhook ${url}: event ${row.event_id} not delivered after ${attempts} attempts (${r.error}); marked failed`)
        } else report.retrying++
        // an endpoint that cannot be reached gets no more tries this pass
        if (r.unreachable) return
      }
    }),
  )
  return report
}

/** Runs a delivery pass after a pipeline run; logs and swallows every error (delivery is best effort per pass). */
export async function deliverAfterRun(db: Db, config: Pick<Config, 'webhooks'>, log: (m: string) => void = () => {}): Promise<void> {
  if (config.webhooks.length === 0) return
  try {
    const r = await deliverWebhooks(db, config, { log, budgetMs: 10_000 })
    if (r.attempted) log(`webhooks: ${r.delivered} delivered, ${r.retrying} to retry, ${r.failed} given up`)
  } catch (err) {
    log(`webhooks: delivery pass failed: ${(err as Error).message}`)
  }
}
