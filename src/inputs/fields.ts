/**
 * @module inputs/fields
 * Field parsers for import rows: each returns the value or throws FieldError naming what is wrong.
 */

export class FieldError extends Error {
  constructor(
    readonly column: string,
    reason: string,
  ) {
    super(reason)
    this.name = 'FieldError'
  }
}

export function text(values: Record<string, string>, column: string, opts: { required?: boolean; max?: number } = {}): string {
  const v = (values[column] ?? '').trim()
  if (opts.required !== false && v === '') throw new FieldError(column, 'is empty')
  if (v.length > (opts.max ?? 10_000)) throw new FieldError(column, `is longer than ${opts.max ?? 10_000} characters`)
  if (/[\u0000-\u0008\u000b\u000c\u000e-\u001f]/.test(v)) throw new FieldError(column, 'contains control characters')
  return v
}

interface NumberOptions {
  required?: boolean
  min?: number
  max?: number
  integer?: boolean
}

export function number(values: Record<string, string>, column: string, opts: NumberOptions & { required: false }): number | null
export function number(values: Record<string, string>, column: string, opts?: NumberOptions & { required?: true }): number
export function number(values: Record<string, string>, column: string, opts: NumberOptions = {}): number | null {
  const raw = (values[column] ?? '').trim()
  if (raw === '') {
    if (opts.required === false) return null
    throw new FieldError(column, 'is empty (a number is required)')
  }
  if (!/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(raw)) throw new FieldError(column, `"${raw.slice(0, 40)}" is not a number`)
  const n = Number(raw)
  if (!Number.isFinite(n)) throw new FieldError(column, `"${raw.slice(0, 40)}" is not a finite number`)
  if (opts.integer && !Number.isInteger(n)) throw new FieldError(column, `${raw} is not a whole number`)
  if (opts.min !== undefined && n < opts.min) throw new FieldError(column, `${raw} is below the minimum ${opts.min}`)
  if (opts.max !== undefined && n > opts.max) throw new FieldError(column, `${raw} is above the maximum ${opts.max}`)
  return n
}

const ISO_DATE = /^(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2})(?:\.\d+)?)?(Z|[+-]\d{2}:?\d{2})?)?$/

/** An ISO 8601 date or date-time; returns the normalised ISO string (UTC). */
export function date(values: Record<string, string>, column: string, opts: { required: false }): string | null
export function date(values: Record<string, string>, column: string, opts?: { required?: true }): string
export function date(values: Record<string, string>, column: string, opts: { required?: boolean } = {}): string | null {
  const raw = (values[column] ?? '').trim()
  if (raw === '') {
    if (opts.required === false) return null
    throw new FieldError(column, 'is empty (an ISO 8601 date is required)')
  }
  return parseIsoDate(raw, column)
}

export function parseIsoDate(raw: string, column: string): string {
  const m = ISO_DATE.exec(raw)
  if (!m) throw new FieldError(column, `"${raw.slice(0, 40)}" is not an ISO 8601 date (YYYY-MM-DD or YYYY-MM-DDThh:mm:ssZ)`)
  const [, y, mo, d] = m
  const month = Number(mo)
  const day = Number(d)
  const dim = new Date(Date.UTC(Number(y), month, 0)).getUTCDate()
  if (month < 1 || month > 12 || day < 1 || day > dim) throw new FieldError(column, `"${raw}" is not a calendar date`)
  const t = Date.parse(m[4] === undefined ? `${y}-${mo}-${d}T00:00:00Z` : m[7] === undefined ? raw.replace(' ', 'T') + 'Z' : raw.replace(' ', 'T'))
  if (Number.isNaN(t)) throw new FieldError(column, `"${raw}" is not a valid date-time`)
  return new Date(t).toISOString()
}

/** A list split on `|`, items trimmed, empties dropped. */
export function list(values: Record<string, string>, column: string): string[] {
  return (values[column] ?? '')
    .split('|')
    .map((s) => s.trim())
    .filter(Boolean)
}
