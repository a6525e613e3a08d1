/**
 * @module server/cache
 * A small in-memory cache of rendered GET responses (pages, JSON, CSV), keyed by URL and sign-in
 * session, valid while the data has not changed (see server/freshness: this connection's writes at
 * once, other processes' commits after a grace period) and for at most a minute (pages mention the
 * current time: expiring snoozes, next runs). The dashboard is read far more than its data changes,
 * so repeated views cost a lookup instead of a render. Writes through this server go through this
 * connection, so they are seen at once.
 *
 * Responses are cached only with status 200; each session's pages (which carry its CSRF field) are
 * kept apart; assets and feed files have their own ETags and are not cached here.
 */
import type { MiddlewareHandler } from 'hono'
import type { DataStamp } from '../db/dashboard.ts'
import type { Env } from './deps.ts'
import { DEFAULT_GRACE_MS, stillFresh } from './freshness.ts'

interface Entry {
  stamp: DataStamp
  at: number
  body: ArrayBuffer
  headers: [string, string][]
}

export interface CacheOptions {
  /** entries kept (oldest dropped first) */
  max?: number
  ttlMs?: number
  /** how long another process's commits may go unseen (see server/freshness) */
  graceMs?: number
}

const SKIP = /^\/(assets|feeds)\/|^\/(login|healthz)$/

export function responseCache(stamp: () => DataStamp, options: CacheOptions = {}): MiddlewareHandler<Env> {
  const max = options.max ?? 200
  const ttl = options.ttlMs ?? 60_000
  const grace = options.graceMs ?? DEFAULT_GRACE_MS
  const entries = new Map<string, Entry>()
  return async (c, next) => {
    if (c.req.method !== 'GET' || SKIP.test(c.req.path)) return next()
    const key = `${c.req.url}\n${c.get('session')?.csrf ?? '-'}`
    const now = Date.now()
    const current = stamp()
    const hit = entries.get(key)
    if (hit && now - hit.at < ttl && stillFresh(hit.stamp, hit.at, current, now, grace)) {
      // refresh its place in the eviction order
      entries.delete(key)
      entries.set(key, hit)
      return new Response(hit.body, { status: 200, headers: hit.headers })
    }
    await next()
    const type = c.res.headers.get('content-type') ?? ''
    if (c.res.status !== 200 || !/^(text\/html|application\/json|text\/csv)/.test(type)) return
    const body = await c.res.clone().arrayBuffer()
    entries.delete(key)
    entries.set(key, { stamp: current, at: now, body, headers: [...c.res.headers.entries()] })
    while (entries.size > max) entries.delete(entries.keys().next().value as string)
  }
}
