/**
 * @module ingest/readers
 * Row readers for JobPosting JSON Lines and request logs (DESIGN.md "Input kinds"): one line or
 * row in, one document out, or an ItemError naming the field. Request logs are CSV or JSON Lines
 * with `timestamp,text,channel,team` (`timestamp` and `text` required).
 */
import { FieldError, parseIsoDate } from '../inputs/fields.ts'
import { readCsv } from '../util/csv.ts'
import { EARLIEST_DATE, FUTURE_SLACK_MS } from './dates.ts'
import { type DocumentInput, ItemError, type ItemProblem } from './document.ts'
import { postingFromJsonLd } from './job-posting.ts'
import { cleanText, contentId } from './text.ts'
import type { Line } from './lines.ts'

export type LineKind = 'postings' | 'requests'

function parseJsonLine(text: string): unknown {
  try {
    return JSON.parse(text)
  } catch (err) {
    throw new ItemError(undefined, `not valid JSON: ${(err as Error).message}`)
  }
}

/** One JSON Lines line to a document; null for a blank line. @throws ItemError */
export function documentFromLine(l: Line, kind: LineKind): DocumentInput | null {
  if (l.text === null) throw new ItemError(undefined, (l as { tooLong?: boolean }).tooLong ? 'line is too long' : `not valid UTF-8 (byte ${l.invalidAt})`)
  if (l.text.trim() === '') return null
  const obj = parseJsonLine(l.text)
  return kind === 'postings' ? postingFromJsonLd(obj, { fallbackDate: null }) : requestFromObject(obj)
}

function requestText(v: unknown, field: string, required: boolean): string | null {
  if (v !== undefined && v !== null && typeof v !== 'string' && typeof v !== 'number') throw new ItemError(field, 'is not text')
  const text = v === undefined || v === null ? '' : cleanText(String(v))
  if (text === '' && required) throw new ItemError(field, 'is empty')
  return text || null
}

/** A request row (CSV values or a JSON object) to a document. @throws ItemError */
export function requestFromObject(obj: unknown): DocumentInput {
  if (typeof obj !== 'object' || obj === null || Array.isArray(obj)) throw new ItemError(undefined, 'not a JSON object')
  const v = obj as Record<string, unknown>
  const rawTime = requestText(v['timestamp'], 'timestamp', true)!
  let postedAt: string
  try {
    postedAt = parseIsoDate(rawTime, 'timestamp')
  } catch (err) {
    if (err instanceof FieldError) throw new ItemError('timestamp', err.message)
    throw err
  }
  const t = Date.parse(postedAt)
  if (t < EARLIEST_DATE || t > Date.now() + FUTURE_SLACK_MS) throw new ItemError('timestamp', `"${rawTime}" is outside 1990 to now`)
  const text = requestText(v['text'], 'text', true)!
  const channel = requestText(v['channel'], 'channel', false)
  const team = requestText(v['team'], 'team', false)
  // a request has no id of its own: the same time, text, channel and team is the same request
  return { externalId: contentId(postedAt, text, channel, team), kind: 'request', title: '', body: text, postedAt, dateEstimated: false, channel, team }
}

export const REQUEST_COLUMNS = { required: ['timestamp', 'text'], optional: ['channel', 'team'] } as const

export interface CsvDocuments {
  rows: { line: number; doc: DocumentInput }[]
  problems: ItemProblem[]
  fatal: ItemProblem | null
}

/**
 * A request-log CSV to documents; a missing required column is fatal, bad rows are problems.
 * @param lossy the text was decoded with replacement characters (invalid UTF-8 somewhere): rows
 *   that contain one are rejected rather than stored garbled
 */
export function requestsFromCsv(text: string, file: string, lossy = false): CsvDocuments {
  const parsed = readCsv(text, file, REQUEST_COLUMNS.required, REQUEST_COLUMNS.optional)
  if (parsed.fatal) return { rows: [], problems: [], fatal: { file, line: parsed.fatal.line, field: parsed.fatal.column, reason: parsed.fatal.reason } }
  const problems: ItemProblem[] = [
    ...parsed.warnings.map((p) => ({ file, line: p.line, field: p.column, reason: p.reason, warning: true })),
    ...parsed.problems.map((p) => ({ file, line: p.line, field: p.column, reason: p.reason, warning: false })),
  ]
  const rows: CsvDocuments['rows'] = []
  for (const { line, values } of parsed.rows) {
    if (lossy && Object.values(values).some((x) => x.includes('\ufffd'))) {
      problems.push({ file, line, reason: 'not valid UTF-8' })
      continue
    }
    try {
      rows.push({ line, doc: requestFromObject(values) })
    } catch (err) {
      if (!(err instanceof ItemError)) throw err
      problems.push({ file, line, field: err.field, reason: err.message })
    }
  }
  return { rows, problems, fatal: null }
}
