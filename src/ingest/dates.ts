/**
 * @module ingest/dates
 * Posting dates as feeds and files write them: RFC 822 / RFC 1123 (RSS 2.0 `pubDate`, RSS 2.0
 * specification "Elements of <item>") and RFC 3339 / ISO 8601 (Atom `published`/`updated`, RFC 4287
 * section 3.3; schema.org `datePosted`). Strict on form: `Date.parse` alone accepts strings such as
 * "1" or "May" and would invent a date; here anything else is an error the caller records.
 */
import { FieldError, parseIsoDate } from '../inputs/fields.ts'

/** RFC 822 section 5.1 date-time, with RFC 1123's four-digit year also allowed. */
const RFC822 =
  /^(?:(Mon|Tue|Wed|Thu|Fri|Sat|Sun),\s*)?(\d{1,2})\s+(Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec)\s+(\d{2}|\d{4})\s+(\d{2}):(\d{2})(?::(\d{2}))?\s*(UT|GMT|EST|EDT|CST|CDT|MST|MDT|PST|PDT|Z|[A-IK-Y]|[+-]\d{4})?$/i

const MONTHS = ['jan', 'feb', 'mar', 'apr', 'may', 'jun', 'jul', 'aug', 'sep', 'oct', 'nov', 'dec']
/** RFC 822 section 5.1 zone names; military single letters other than Z are ambiguous in practice and read as UTC */
const ZONES: Record<string, number> = { ut: 0, gmt: 0, z: 0, est: -300, edt: -240, cst: -360, cdt: -300, mst: -420, mdt: -360, pst: -480, pdt: -420 }

/** Earliest posting date taken as real; anything before is a broken clock or a placeholder. */
export const EARLIEST_DATE = Date.UTC(1990, 0, 1)
/** Dates more than this far after the fetch are not believed. */
export const FUTURE_SLACK_MS = 2 * 24 * 3600 * 1000

export type DateResult = { ok: true; iso: string } | { ok: false; reason: string }

/**
 * Parses an RFC 822 or ISO 8601 date and checks that it is plausible (1990 to two days after `now`).
 * @example parsePostingDate('Sat, 07 Sep 2002 00:00:01 GMT') // => { ok: true, iso: '2002-09-07T00:00:01.000Z' }
 */
export function parsePostingDate(raw: string, now: number = Date.now()): DateResult {
  const s = raw.trim()
  if (s === '') return { ok: false, reason: 'is empty' }
  let t: number | null = null
  const m = RFC822.exec(s)
  if (m) {
    const [, , day, mon, yearRaw, hh, mm, ss, zone] = m
    let year = Number(yearRaw)
    // RFC 822 two-digit years; RFC 2822 section 4.3 reads 00-49 as 20xx and 50-99 as 19xx
    if (yearRaw!.length === 2) year += year < 50 ? 2000 : 1900
    const month = MONTHS.indexOf(mon!.toLowerCase())
    const d = Number(day)
    const dim = new Date(Date.UTC(year, month + 1, 0)).getUTCDate()
    if (d < 1 || d > dim || Number(hh) > 23 || Number(mm) > 59 || Number(ss ?? 0) > 60) return { ok: false, reason: `"${clip(s)}" is not a calendar date-time` }
    let offset = 0
    const z = (zone ?? 'GMT').toLowerCase()
    if (/^[+-]\d{4}$/.test(z)) offset = (z[0] === '-' ? -1 : 1) * (Number(z.slice(1, 3)) * 60 + Number(z.slice(3, 5)))
    else offset = ZONES[z] ?? 0
    t = Date.UTC(year, month, d, Number(hh), Number(mm), Number(ss ?? 0)) - offset * 60_000
  } else {
    try {
      t = Date.parse(parseIsoDate(s, 'date'))
    } catch (err) {
      if (!(err instanceof FieldError)) throw err
      // an ISO-shaped value gets the ISO parser's own reason (e.g. "is not a calendar date")
      if (/^\d{4}-\d{2}-\d{2}/.test(s)) return { ok: false, reason: err.message }
      return { ok: false, reason: `"${clip(s)}" is neither an RFC 822 nor an ISO 8601 date` }
    }
  }
  if (t < EARLIEST_DATE) return { ok: false, reason: `"${clip(s)}" is before 1990` }
  if (t > now + FUTURE_SLACK_MS) return { ok: false, reason: `"${clip(s)}" is in the future` }
  return { ok: true, iso: new Date(t).toISOString() }
}

function clip(s: string): string {
  return s.length > 40 ? `${s.slice(0, 40)}...` : s
}

/** 'YYYY-MM' of an ISO date-time (UTC). */
export function monthOf(iso: string): string {
  return iso.slice(0, 7)
}
