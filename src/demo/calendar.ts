/**
 * @module demo/calendar
 * The demo period: the months that end at the "as of" date (today by default), the share of each
 * month that has elapsed, hiring seasonality, and date formatting for JSON-LD, RSS and Atom.
 */
import type { Rng } from './prng.ts'

export interface DemoMonth {
  /** 0 = the first month of the demo period */
  index: number
  /** YYYY-MM */
  key: string
  year: number
  /** 1-12 */
  month: number
  daysInMonth: number
  /** days that can carry postings: all of them, except in the last month (up to the as-of day) */
  openDays: number
}

const AS_OF = /^(\d{4})-(\d{2})-(\d{2})$/

/**
 * Parses an as-of date (YYYY-MM-DD).
 * @throws Error naming the bad value
 */
export function parseAsOf(asOf: string): { year: number; month: number; day: number } {
  const m = AS_OF.exec(asOf)
  if (!m) throw new Error(`demo as-of date "${asOf}" is not YYYY-MM-DD`)
  const year = Number(m[1])
  const month = Number(m[2])
  const day = Number(m[3])
  if (month < 1 || month > 12 || day < 1 || day > daysIn(year, month)) throw new Error(`demo as-of date "${asOf}" is not a calendar date`)
  return { year, month, day }
}

/** Today's date in UTC as YYYY-MM-DD. */
export function todayUtc(now: Date = new Date()): string {
  return now.toISOString().slice(0, 10)
}

export function daysIn(year: number, month: number): number {
  return new Date(Date.UTC(year, month, 0)).getUTCDate()
}

/**
 * The `count` months that end with the as-of date's month, oldest first.
 * @example
 * demoMonths('2025-03-10', 3).map((m) => m.key) // => ['2025-01', '2025-02', '2025-03']
 */
export function demoMonths(asOf: string, count: number): DemoMonth[] {
  if (!Number.isInteger(count) || count < 1) throw new Error('demo months must be a positive whole number')
  const end = parseAsOf(asOf)
  const out: DemoMonth[] = []
  for (let i = 0; i < count; i++) {
    const offset = count - 1 - i
    const total = end.year * 12 + (end.month - 1) - offset
    const year = Math.floor(total / 12)
    const month = (total % 12) + 1
    const days = daysIn(year, month)
    out.push({ index: i, key: `${year}-${String(month).padStart(2, '0')}`, year, month, daysInMonth: days, openDays: offset === 0 ? end.day : days })
  }
  return out
}

/**
 * Hiring seasonality by calendar month (invented for the demo, shaped like a common pattern: a
 * January restart, a summer lull, an autumn pick-up and a quiet December). Mean 1.
 */
export const HIRING_SEASON: readonly number[] = [1.16, 1.1, 1.06, 1.02, 0.99, 0.94, 0.86, 0.83, 1.06, 1.07, 0.99, 0.72].map(
  (v, _i, all) => v / (all.reduce((a, b) => a + b, 0) / all.length),
)

/** Learning requests peak in January and September, drop in August and December (invented). */
export const LEARNING_SEASON: readonly number[] = [1.25, 1.08, 1.02, 0.98, 0.96, 0.9, 0.8, 0.7, 1.2, 1.12, 1.04, 0.75].map(
  (v, _i, all) => v / (all.reduce((a, b) => a + b, 0) / all.length),
)

/** A random moment in the open days of the month, as epoch milliseconds (office hours weighted). */
export function randomMoment(rng: Rng, m: DemoMonth): number {
  const day = 1 + rng.int(m.openDays)
  const hour = rng.chance(0.85) ? 7 + rng.int(11) : rng.int(24)
  return Date.UTC(m.year, m.month - 1, day, hour, rng.int(60), rng.int(60))
}

/** ISO 8601 date-time without milliseconds: 2025-03-04T09:15:00Z. */
export function isoSeconds(ms: number): string {
  return new Date(ms).toISOString().slice(0, 19) + 'Z'
}

export function isoDate(ms: number): string {
  return new Date(ms).toISOString().slice(0, 10)
}

/** RFC 822 date as RSS 2.0 wants it (Date#toUTCString gives the RFC 7231 form, which is RFC 822 compatible). */
export function rfc822(ms: number): string {
  return new Date(ms).toUTCString().replace('GMT', '+0000')
}
