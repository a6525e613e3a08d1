/**
 * @module util/csv
 * CSV reading with line numbers (csv-parse) and CSV writing that neutralises formula injection.
 */
import { parse } from 'csv-parse/sync'

/** One bad row or field; the message names file, line and column. */
export interface InputProblem {
  file: string
  line: number
  column?: string
  reason: string
}

export function formatProblem(p: InputProblem): string {
  return `${p.file}:${p.line}${p.column ? `: column ${p.column}` : ''}: ${p.reason}`
}

export interface CsvRow {
  line: number
  values: Record<string, string>
}

export interface CsvReadResult {
  rows: CsvRow[]
  /** bad rows (wrong number of fields) */
  problems: InputProblem[]
  /** notes that reject nothing (unknown columns are ignored) */
  warnings: InputProblem[]
  /** a problem that stops the whole file (missing column, unclosed quote) */
  fatal?: InputProblem
}

/**
 * Parses CSV text with a header row. Rows with the wrong number of fields become problems; the
 * other rows are kept. Missing required columns are fatal.
 */
export function readCsv(text: string, file: string, required: readonly string[], optional: readonly string[] = []): CsvReadResult {
  // many NULs mark UTF-16 without a byte-order mark, or a binary file (a stray one is a bad field)
  const head = text.slice(0, 4096)
  if (head.length > 0 && head.split('\u0000').length - 1 >= head.length / 4) {
    return { rows: [], problems: [], warnings: [], fatal: { file, line: 1, reason: 'mostly NUL bytes: a binary file, or text saved as UTF-16; save it as UTF-8 CSV' } }
  }
  let records: { record: string[]; info: { lines: number }; raw: string }[]
  try {
    records = parse(text, { info: true, raw: true, relax_column_count: true, bom: true, skip_empty_lines: true, trim: false }) as never
  } catch (err) {
    const e = err as Error & { lines?: number }
    return { rows: [], problems: [], warnings: [], fatal: { file, line: e.lines ?? 1, reason: `not valid CSV: ${e.message}` } }
  }
  if (records.length === 0) return { rows: [], problems: [], warnings: [], fatal: { file, line: 1, reason: 'empty file (a header row is required)' } }
  const header = records[0]!.record.map((h) => h.trim())
  const missing = required.filter((c) => !header.includes(c))
  if (missing.length) {
    return { rows: [], problems: [], warnings: [], fatal: { file, line: 1, column: missing.join(', '), reason: `missing required column(s); header has: ${header.join(', ')}` } }
  }
  const known = new Set([...required, ...optional])
  const unknown = header.filter((h) => !known.has(h))
  const problems: InputProblem[] = []
  const warnings: InputProblem[] = []
  if (unknown.length) warnings.push({ file, line: 1, column: unknown.join(', '), reason: 'unknown column(s) ignored' })
  const rows: CsvRow[] = []
  for (const { record, info, raw } of records.slice(1)) {
    // info.lines is the record's last line; its raw text also holds the blank lines skipped before it
    const line = info.lines - (raw.replace(/^[\r\n]+/, '').replace(/\r?\n$/, '').split('\n').length - 1)
    if (record.length !== header.length) {
      problems.push({ file, line, reason: `expected ${header.length} fields, found ${record.length}` })
      continue
    }
    const values: Record<string, string> = {}
    header.forEach((h, i) => (values[h] = record[i]!))
    rows.push({ line, values })
  }
  return { rows, problems, warnings }
}

/** Cells that a spreadsheet would run as a formula get a leading apostrophe (OWASP CSV injection advice). */
export function neutraliseCell(value: string): string {
  return /^[=+\-@\t\r]/.test(value) ? `'${value}` : value
}

function quote(value: unknown): string {
  if (value === null || value === undefined) return ''
  const text = typeof value === 'number' ? (Number.isFinite(value) ? String(value) : '') : neutraliseCell(typeof value === 'string' ? value : JSON.stringify(value))
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text
}

/**
 * Writes rows as CSV (RFC 4180 quoting), numbers as numbers, text neutralised against formula injection.
 * @example toCsv([{ a: 1, b: '=1+1' }], ['a', 'b']) // => "a,b\r\n1,'=1+1\r\n"
 */
export function toCsv(rows: readonly Record<string, unknown>[], columns?: readonly string[]): string {
  const cols = columns ?? (rows.length ? Object.keys(rows[0]!) : [])
  const lines = [cols.map(quote).join(',')]
  for (const row of rows) lines.push(cols.map((c) => quote(row[c])).join(','))
  return lines.join('\r\n') + '\r\n'
}
