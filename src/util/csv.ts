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
  // line 0: the whole file (it could not be read, or its kind is wrong), so no line is named
  return `${p.file}${p.line > 0 ? `:${p.line}` : ''}${p.column ? `: column ${p.column}` : ''}: ${p.reason}`
}

export interface CsvRow {
  line: number
  values: Record<string, string>
}

export interface CsvReadResult {
  rows: CsvRow[]
  /** bad rows (wrong number of fields, a quote never closed) */
  problems: InputProblem[]
  /** notes that reject nothing (unknown columns are ignored) */
  warnings: InputProblem[]
  /** a problem that stops the whole file (missing column, a header or quoting that does not parse) */
  fatal?: InputProblem
}

/**
 * Parses CSV text with a header row. Rows with the wrong number of fields become problems; the
 * other rows are kept. Missing required columns are fatal, and so is a header that does not parse.
 * A quote left open (a file cut inside a quoted field) is a problem of the row it is in: the rows
 * before it are kept. Other malformed quoting stops the file at the row where it occurs.
 *
 * Every line number is the physical line where the row starts, counting `\r\n`, `\r` and `\n` as one
 * line break each (csv-parse's own count adds one for each `\r\n` inside a quoted field, so it is
 * not used): row starts are found from the byte offsets csv-parse reports (`info.bytes`). Problems
 * of the header itself (missing or unknown columns) name the header's line (after blank lines, not
 * line 1). Unknown columns are warnings (`warnings`), kept apart from the rows' problems.
 */
export function readCsv(text: string, file: string, required: readonly string[], optional: readonly string[] = []): CsvReadResult {
  // many NULs mark UTF-16 without a byte-order mark, or a binary file (a stray one is a bad field)
  const head = text.slice(0, 4096)
  if (head.length > 0 && head.split('\u0000').length - 1 >= head.length / 4) {
    return { rows: [], problems: [], warnings: [], fatal: { file, line: 1, reason: 'mostly NUL bytes: a binary file, or text saved as UTF-16; save it as UTF-8 CSV' } }
  }
  const bytes = Buffer.from(text)
  const lines = new LineCounter(bytes)
  // records are collected as they are parsed, so those before a parse error are kept
  const records: { record: string[]; line: number }[] = []
  let end = text.startsWith('\ufeff') ? 3 : 0 // byte offset where the last record ended
  let parseError: (Error & { code?: string }) | undefined
  try {
    parse(bytes, {
      relax_column_count: true,
      bom: true,
      skip_empty_lines: true,
      trim: false,
      on_record: (record: string[], context: { bytes: number }) => {
        records.push({ record, line: lines.at(rowStart(bytes, end, context.bytes - 1)) })
        end = context.bytes
        return null
      },
    })
  } catch (err) {
    parseError = err as Error & { code?: string }
  }
  const broken = parseError ? lines.at(rowStart(bytes, end, bytes.length)) : 0
  // records of blank cells only before the header (a lone \r in a \n file is one) are blank lines
  while (records.length > 0 && records[0]!.record.every((cell) => cell.trim() === '')) records.shift()
  if (records.length === 0) {
    if (parseError) return { rows: [], problems: [], warnings: [], fatal: { file, line: broken, reason: parseReason(parseError, bytes, end, lines, null) } }
    return { rows: [], problems: [], warnings: [], fatal: { file, line: 1, reason: 'empty file (a header row is required)' } }
  }
  const header = records[0]!.record.map((h) => h.trim())
  const headerLine = records[0]!.line
  const missing = required.filter((c) => !header.includes(c))
  if (missing.length) {
    return { rows: [], problems: [], warnings: [], fatal: { file, line: headerLine, column: missing.join(', '), reason: `missing required column(s); header has: ${header.join(', ')}` } }
  }
  if (parseError && parseError.code !== 'CSV_QUOTE_NOT_CLOSED') {
    return { rows: [], problems: [], warnings: [], fatal: { file, line: broken, reason: parseReason(parseError, bytes, end, lines, header) } }
  }
  const known = new Set([...required, ...optional])
  const unknown = header.filter((h) => !known.has(h))
  const problems: InputProblem[] = []
  const warnings: InputProblem[] = []
  if (unknown.length) warnings.push({ file, line: headerLine, column: unknown.join(', '), reason: 'unknown column(s) ignored' })
  const rows: CsvRow[] = []
  for (const { record, line } of records.slice(1)) {
    if (record.length !== header.length) {
      problems.push({ file, line, reason: `expected ${header.length} fields, found ${record.length}` })
      continue
    }
    const values: Record<string, string> = {}
    header.forEach((h, i) => (values[h] = record[i]!))
    rows.push({ line, values })
  }
  // the unclosed quote runs to the end of the file, so its row is the last
  if (parseError) problems.push({ file, line: broken, reason: parseReason(parseError, bytes, end, lines, header) })
  return { rows, problems, warnings }
}

const CR = 0x0d
const LF = 0x0a
const QUOTE = 0x22
const COMMA = 0x2c

/**
 * Where a row starts: after the blank lines that csv-parse skipped between the previous record's
 * end and this one, but not past `limit` (a record of a lone `\r` in a `\n` file is content).
 */
function rowStart(bytes: Buffer, from: number, limit: number): number {
  let at = from
  while (at < limit && (bytes[at] === CR || bytes[at] === LF)) at++
  return at
}

/** Physical line numbers of byte offsets, asked for in increasing order (one pass over the text). */
class LineCounter {
  private offset = 0
  private line = 1
  constructor(private readonly bytes: Buffer) {}
  /** the 1-based line of the byte at `offset`: `\r\n`, lone `\r` and `\n` each end a line */
  at(offset: number): number {
    const b = this.bytes
    if (offset < this.offset) throw new Error('LineCounter offsets must not decrease')
    for (let i = this.offset; i < offset; i++) {
      if (b[i] === LF || (b[i] === CR && b[i + 1] !== LF)) this.line++
    }
    this.offset = offset
    return this.line
  }
}

/** A parse error's reason; for an unclosed quote, where the quote opens and in which field. */
function parseReason(err: Error & { code?: string }, bytes: Buffer, end: number, lines: LineCounter, header: string[] | null): string {
  if (err.code !== 'CSV_QUOTE_NOT_CLOSED') return `not valid CSV: ${err.message.replace(/ at line \d+/, '')}`
  // walk the broken row as csv-parse did (it reached the end of the text inside a quoted field)
  let field = 0
  let opened = -1
  let quoted = false
  let fieldStart = true
  for (let i = rowStart(bytes, end, bytes.length); i < bytes.length; i++) {
    const b = bytes[i]
    if (quoted) {
      if (b === QUOTE) {
        if (bytes[i + 1] === QUOTE) i++
        else quoted = false
      }
      continue
    }
    if (b === QUOTE && fieldStart) {
      quoted = true
      opened = i
    } else if (b === COMMA) field++
    fieldStart = b === COMMA
  }
  const name = header?.[field] ? ` (${header[field]})` : ''
  const where = opened >= 0 ? ` on line ${lines.at(opened)}` : ''
  return `not valid CSV: Quote Not Closed: field ${field + 1}${name} opens a quote${where} that is never closed (the file may be cut short)`
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
