/**
 * @module server/format
 * Number and date wording for the dashboard, in one place so pages and tests agree.
 * Every function accepts null/undefined/NaN and answers with an en dash, never "NaN".
 */

const DASH = '–'

function ok(x: number | null | undefined): x is number {
  return typeof x === 'number' && Number.isFinite(x)
}

/** A share as a percentage: 0.01234 -> "1.23%". */
export function share(x: number | null | undefined, digits = 2): string {
  return ok(x) ? `${(x * 100).toFixed(digits)}%` : DASH
}

/** A yearly change as a signed percentage: 0.35 -> "+35% a year". */
export function growth(x: number | null | undefined): string {
  if (!ok(x)) return DASH
  const pct = x * 100
  const text = Math.abs(pct) >= 100 ? pct.toFixed(0) : pct.toFixed(1)
  return `${pct > 0 ? '+' : pct < 0 ? '−' : '±'}${text.replace('-', '')}% a year`
}

/** A signed percentage without unit, for intervals: 0.35 -> "+35%". */
export function signedPct(x: number | null | undefined): string {
  if (!ok(x)) return DASH
  const pct = x * 100
  return `${pct > 0 ? '+' : pct < 0 ? '−' : '±'}${Math.abs(pct).toFixed(Math.abs(pct) >= 100 ? 0 : 1)}%`
}

/** Months, one decimal below ten: 7.25 -> "7.3 months". */
export function months(x: number | null | undefined): string {
  if (!ok(x)) return DASH
  return `${x < 10 ? x.toFixed(1) : x.toFixed(0)} months`
}

/** An interval "[low – high]" with the given formatter; an en dash when both ends are missing. */
export function interval(low: number | null | undefined, high: number | null | undefined, f: (x: number | null | undefined) => string): string {
  if (!ok(low) && !ok(high)) return DASH
  return `${f(low)} to ${f(high)}`
}

/** A p-value in words-friendly form: "< 0.001", "0.032". */
export function pValue(p: number | null | undefined): string {
  if (!ok(p)) return DASH
  if (p < 0.001) return '< 0.001'
  return p.toFixed(3)
}

/**
 * A plain number: with `digits`, always that many decimals (a column of θ reads 0.00, -0.20, 0.30,
 * not 0, -0.20, 0.30); without, a whole number as it is and any other to one decimal (counts).
 */
export function num(x: number | null | undefined, digits?: number): string {
  if (!ok(x)) return DASH
  if (digits !== undefined) return x.toFixed(digits)
  return Number.isInteger(x) ? String(x) : x.toFixed(1)
}

/** An ISO timestamp shortened to minutes, UTC: "2025-03-04 12:30 UTC". */
export function when(iso: string | null | undefined): string {
  if (!iso) return DASH
  const d = new Date(iso)
  if (Number.isNaN(d.getTime())) return iso
  return `${d.toISOString().slice(0, 16).replace('T', ' ')} UTC`
}

/** "2025-03" -> "Mar 2025". */
export function month(m: string | null | undefined): string {
  if (!m) return DASH
  const match = /^(\d{4})-(\d{2})/.exec(m)
  if (!match) return m
  const names = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec']
  return `${names[Number(match[2]) - 1] ?? match[2]} ${match[1]}`
}

/** Finite number or null (for JSON output). */
export function finite(x: unknown): number | null {
  return typeof x === 'number' && Number.isFinite(x) ? x : null
}
