/**
 * @module server/deps
 * What every route module receives, and small request helpers shared by them.
 */
import type { Context } from 'hono'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { toCsv } from '../util/csv.ts'
import type { Actions } from './actions.ts'
import type { SecurityEnv } from './security.ts'

export interface NextRun {
  name: string
  cron?: string
  next: string | null
}

export interface Deps {
  db: Db
  config: Config
  nextRuns: () => NextRun[]
  actions: Actions
  /** called after a write that emitted events, so subscribed stages run (re-map, refit, re-plan) */
  afterWrite: () => void
  /** how long other processes' commits may go unseen by cached pages and the skill index (server/freshness) */
  graceMs: number
}

export type Env = SecurityEnv

export type Ctx = Context<Env>

/** True when the request asks for CSV (`?format=csv`). */
export function wantsCsv(c: Ctx): boolean {
  return c.req.query('format') === 'csv'
}

/** A CSV attachment; cells are neutralised against spreadsheet formula injection by toCsv. */
export function csv(c: Ctx, name: string, rows: readonly Record<string, unknown>[], columns?: readonly string[]): Response {
  const safe = name.replace(/[^\w.-]+/g, '-')
  return c.body(toCsv(rows, columns), 200, {
    'Content-Type': 'text/csv; charset=utf-8',
    'Content-Disposition': `attachment; filename="${safe}.csv"`,
  })
}

/** The URL of the current request with some query parameters replaced (null removes one). */
export function withQuery(c: Ctx, changes: Record<string, string | number | null>, path?: string): string {
  const url = new URL(c.req.url)
  for (const [k, v] of Object.entries(changes)) {
    if (v === null || v === '') url.searchParams.delete(k)
    else url.searchParams.set(k, String(v))
  }
  const qs = url.searchParams.toString()
  return `${path ?? url.pathname}${qs ? `?${qs}` : ''}`
}

/** A bounded positive integer from the query string. */
export function intParam(value: string | undefined, fallback: number, min: number, max: number): number {
  const n = value === undefined ? NaN : Number(value)
  if (!Number.isInteger(n)) return fallback
  return Math.min(max, Math.max(min, n))
}

/** The smallest group whose aggregate figures may be shown. */
export function minGroup(deps: Deps): number {
  return deps.config.ability.minGroupSize
}
