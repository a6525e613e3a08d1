/**
 * @module server/freshness
 * When something computed from the database (a rendered page, the overview's skill index) may be
 * reused. Changes made through this connection (the dashboard's own writes, a stage run in this
 * process) are seen at once. Commits by another process (a `tides run` writing batch after batch)
 * are picked up within a short grace period instead of on every request: while a run commits many
 * times a second, each page is rebuilt at most once per grace period, so readers are not starved by
 * re-rendering. A page can therefore be up to the grace period (default 2 s) behind another
 * process's commit, never behind its own writes.
 */
import type { DataStamp } from '../db/dashboard.ts'

/** Default grace for other processes' commits, in milliseconds. */
export const DEFAULT_GRACE_MS = 2000

/**
 * Whether a result built at `builtAt` under stamp `built` may still be used under stamp `now`.
 *
 * @example
 * ```ts
 * stillFresh({ own: '4', shared: '9:1' }, 1000, { own: '4', shared: '9:2' }, 1500, 2000) // => true
 * stillFresh({ own: '4', shared: '9:1' }, 1000, { own: '5', shared: '9:1' }, 1001, 2000) // => false
 * ```
 */
export function stillFresh(built: DataStamp, builtAt: number, now: DataStamp, at: number, graceMs: number): boolean {
  if (built.own !== now.own) return false
  return built.shared === now.shared || at - builtAt < graceMs
}
