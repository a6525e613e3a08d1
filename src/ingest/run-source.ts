/**
 * @module ingest/run-source
 * Runs one configured source: fetch or read it, turn its items or lines into documents, and store
 * them through the batch writer. Feeds and request-log CSVs are read whole (a conditional request
 * or an unchanged file costs nothing); JSON Lines files are streamed from the byte after the last
 * committed line. Every reader keeps good items when others are bad, and says why a bad one was
 * not stored.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import type { Config, SourceConfig } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { type SourceRow, setSourceValidators } from '../db/documents.ts'
import { ItemError } from './document.ts'
import { readFeed } from './feed.ts'
import { type FetchOptions, fetchSource } from './http-fetch.ts'
import { type Line, linesOfBuffer, linesOfFile } from './lines.ts'
import { LineParser, writeFileInParallel } from './parse-pool.ts'
import { type LineKind, documentFromLine, requestsFromCsv } from './readers.ts'
import { decodeBytes } from './text.ts'
import type { BatchWriter } from './writer.ts'

export interface SourceEnv {
  db: Db
  config: Config
  /** extra fetch settings (tests pass a fast `sleep`) */
  fetch?: Partial<FetchOptions>
  /**
   * false for one-off files (inbox files, imports): read the whole file every time and store no
   * cursor or validators on the source row (default true)
   */
  track?: boolean
}

/** What a source run says beyond its counts: an error (the run failed or was partial) and notes. */
export interface SourceOutcome {
  error: string | null
  /** true when nothing could be read at all */
  failed: boolean
  details: Record<string, unknown>
}

const OK: SourceOutcome = { error: null, failed: false, details: {} }

export function isUrl(location: string): boolean {
  return /^https?:\/\//i.test(location)
}

/** A local path relative to the config file's folder (or the working folder without one). */
export function resolveLocal(config: Config, location: string): string {
  const base = (config as Config & { baseDir?: string }).baseDir ?? process.cwd()
  return path.resolve(base, location)
}

type Body =
  | { status: 'unchanged'; how: string }
  | { status: 'ok'; body: Buffer; contentType: string | null; etag: string | null; lastModified: string | null; incomplete: string | null; attempts?: number }

/** Fetches a URL (conditionally) or reads a local file (unchanged when its size and mtime are). */
async function getBody(env: SourceEnv, location: string, row: SourceRow, accept: string): Promise<Body> {
  const c = env.config.ingest
  if (isUrl(location)) {
    const r = await fetchSource(location, { timeoutMs: c.timeoutMs, maxBytes: c.maxBytes, maxRedirects: c.maxRedirects, retries: c.retries, backoffMs: c.backoffMs, etag: row.etag, lastModified: row.last_modified, accept, ...env.fetch })
    if (r.status === 'not-modified') return { status: 'unchanged', how: 'HTTP 304 Not Modified' }
    return r
  }
  const file = resolveLocal(env.config, location)
  const stat = fs.statSync(file)
  const stamp = `file:${stat.size}:${Math.floor(stat.mtimeMs)}`
  if (env.track !== false && row.etag === stamp) return { status: 'unchanged', how: 'file unchanged since the last run' }
  const size = Math.min(stat.size, c.maxBytes)
  const body = Buffer.alloc(size)
  const fd = fs.openSync(file, 'r')
  try {
    fs.readSync(fd, body, 0, size, 0)
  } finally {
    fs.closeSync(fd)
  }
  const incomplete = stat.size > c.maxBytes ? `file is ${stat.size} bytes, over the limit of ${c.maxBytes} (ingest.maxBytes); read only the first ${c.maxBytes}` : null
  return { status: 'ok', body, contentType: null, etag: incomplete ? null : stamp, lastModified: null, incomplete }
}

function storeValidators(env: SourceEnv, id: string, body: Extract<Body, { status: 'ok' }>): () => void {
  return () => {
    if (!body.incomplete && env.track !== false) setSourceValidators(env.db, id, body.etag, body.lastModified)
  }
}

/** RSS 2.0 / Atom feed. */
export async function runFeed(env: SourceEnv, source: SourceConfig, row: SourceRow, writer: BatchWriter): Promise<SourceOutcome> {
  const fetchedAt = new Date().toISOString()
  const body = await getBody(env, source.location, row, 'application/rss+xml, application/atom+xml, application/xml;q=0.9, text/xml;q=0.8')
  if (body.status === 'unchanged') return { ...OK, details: { unchanged: body.how } }
  const decoded = decodeBytes(body.body, body.contentType)
  const feed = await readFeed(decoded.text, source.location, fetchedAt, body.contentType)
  if (feed.fatal) return { error: feed.fatal, failed: true, details: {} }
  for (const p of feed.problems) writer.problem(p)
  for (const { line, doc } of feed.items) {
    if (decoded.invalidAt !== null && `${doc.title}${doc.body}${doc.externalId}`.includes('\ufffd')) {
      writer.problem({ file: source.location, line, item: doc.externalId.slice(0, 200), reason: `not valid UTF-8 (first bad byte of the body at ${decoded.invalidAt})` })
      continue
    }
    writer.add(doc, { file: source.location, line })
  }
  writer.flush(storeValidators(env, source.id, body))
  return { error: body.incomplete, failed: false, details: { format: feed.format, charset: decoded.charset, attempts: body.attempts ?? 1 } }
}

function lineProblem(writer: BatchWriter, file: string, l: Line, err: unknown): void {
  if (!(err instanceof ItemError)) throw err
  writer.problem({ file, line: l.line, field: err.field, reason: err.message })
}

interface FileCursor {
  offset: number
  line: number
  head: string
}

function headHash(file: string): string {
  const fd = fs.openSync(file, 'r')
  try {
    const buf = Buffer.alloc(4096)
    const n = fs.readSync(fd, buf, 0, 4096, 0)
    return crypto.createHash('sha1').update(buf.subarray(0, n)).digest('hex')
  } finally {
    fs.closeSync(fd)
  }
}

/**
 * JSON Lines (postings or requests). A local file is streamed from the byte after the last
 * committed line (while its first 4 KiB are the same file); a URL is fetched conditionally.
 */
export async function runJsonLines(env: SourceEnv, source: SourceConfig, row: SourceRow, writer: BatchWriter, kind: LineKind, onFraction?: (f: number) => void): Promise<SourceOutcome> {
  const where = source.location
  if (isUrl(source.location)) {
    const body = await getBody(env, source.location, row, 'application/x-ndjson, application/jsonl, application/json;q=0.9, */*;q=0.5')
    if (body.status === 'unchanged') return { ...OK, details: { unchanged: body.how } }
    for (const l of linesOfBuffer(body.body)) {
      if (!l.terminated && body.incomplete) break // the cut last line is not a bad row, it is the cut
      try {
        const doc = documentFromLine(l, kind)
        if (doc) writer.add(doc, { file: where, line: l.line })
      } catch (err) {
        lineProblem(writer, where, l, err)
      }
    }
    writer.flush(storeValidators(env, source.id, body))
    return { error: body.incomplete, failed: false, details: { attempts: body.attempts ?? 1 } }
  }
  const file = resolveLocal(env.config, source.location)
  const size = fs.statSync(file).size
  const head = headHash(file)
  let start: FileCursor = { offset: 0, line: 1, head }
  if (row.cursor && env.track !== false) {
    const c = JSON.parse(row.cursor) as FileCursor
    if (c.head === head && c.offset <= size) start = c
  }
  if (start.offset === size) return { ...OK, details: { unchanged: 'no new lines since the last run', resumedAt: start } }
  let n = 0
  // an unterminated last line may still be being written: read it, but resume before it next time
  const cursorOf = (l: Pick<Line, 'line' | 'end' | 'terminated'>) => (l.terminated && env.track !== false ? JSON.stringify({ offset: l.end, line: l.line + 1, head } satisfies FileCursor) : undefined)
  const progress = (l: Pick<Line, 'end'>) => {
    if (onFraction && ++n % 1000 === 0) onFraction(l.end / size)
  }
  const minBytes = env.config.ingest.parseWorkerMinBytes
  const parallel = minBytes !== null && size - start.offset >= minBytes
  if (parallel) {
    const parser = await LineParser.start({ dedupe: env.config.ingest.dedupe, maxTextChars: env.config.ingest.maxTextChars }, env.config.ingest.batchSize)
    try {
      await writeFileInParallel(parser, file, start, kind, writer, where, cursorOf, progress)
    } finally {
      await parser.close()
    }
  } else {
    for (const l of linesOfFile(file, start.offset, start.line)) {
      const cursor = cursorOf(l)
      try {
        const doc = documentFromLine(l, kind)
        if (doc) writer.add(doc, { file: where, line: l.line }, cursor)
        else if (cursor) writer.advance(cursor)
      } catch (err) {
        lineProblem(writer, where, l, err)
        if (cursor) writer.advance(cursor)
      }
      progress(l)
    }
  }
  writer.flush()
  return { ...OK, details: { resumedAt: start.offset > 0 ? start : undefined, parseWorker: parallel } }
}

/** A request log: CSV (read whole) or JSON Lines (streamed), by option, extension or Content-Type. */
export async function runRequests(env: SourceEnv, source: SourceConfig, row: SourceRow, writer: BatchWriter, onFraction?: (f: number) => void): Promise<SourceOutcome> {
  const format = (source.options['format'] as 'csv' | 'jsonl' | undefined) ?? (/\.csv(\?|$)/i.test(source.location) ? 'csv' : /\.(jsonl|ndjson)(\?|$)/i.test(source.location) ? 'jsonl' : null)
  if (format === 'jsonl') return runJsonLines(env, source, row, writer, 'requests', onFraction)
  const body = await getBody(env, source.location, row, 'text/csv, application/x-ndjson;q=0.9, */*;q=0.5')
  if (body.status === 'unchanged') return { ...OK, details: { unchanged: body.how } }
  const sniffed = format ?? (/csv/i.test(body.contentType ?? '') ? 'csv' : /^\s*\{/.test(body.body.subarray(0, 100).toString('latin1')) ? 'jsonl' : 'csv')
  if (sniffed === 'jsonl') {
    for (const l of linesOfBuffer(body.body)) {
      if (!l.terminated && body.incomplete) break
      try {
        const doc = documentFromLine(l, 'requests')
        if (doc) writer.add(doc, { file: source.location, line: l.line })
      } catch (err) {
        lineProblem(writer, source.location, l, err)
      }
    }
  } else {
    const decoded = decodeBytes(body.body, body.contentType)
    const text = body.incomplete ? decoded.text.slice(0, decoded.text.lastIndexOf('\n') + 1) : decoded.text
    const csv = requestsFromCsv(text, source.location, decoded.invalidAt !== null)
    if (csv.fatal) return { error: `${csv.fatal.file}:${csv.fatal.line}${csv.fatal.field ? `: column ${csv.fatal.field}` : ''}: ${csv.fatal.reason}`, failed: true, details: {} }
    for (const p of csv.problems) writer.problem(p)
    for (const r of csv.rows) writer.add(r.doc, { file: source.location, line: r.line })
  }
  writer.flush(storeValidators(env, source.id, body))
  return { error: body.incomplete, failed: false, details: { format: sniffed } }
}
