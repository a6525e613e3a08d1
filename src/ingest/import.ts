/**
 * @module ingest/import
 * `tides import postings FILE.jsonl|FILE.xml` and `tides import requests FILE.csv|FILE.jsonl`, with
 * the contract of every import: a file with bad rows imports nothing unless skipBad is set (then
 * the good rows land and the bad ones are counted); each problem names file, line and field.
 * The whole file is checked first (JSON Lines streamed twice, so a large file is never held in
 * memory), then stored in batches under the source `import:postings` or `import:requests`, with a
 * job run and `documents.ingested` events like any source. Importing the same file again stores
 * nothing new (same external ids).
 */
import fs from 'node:fs'
import path from 'node:path'
import type { ImportOptions } from '../commands/registry.ts'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { upsertSource } from '../db/documents.ts'
import { finishRun, startRun } from '../db/runs.ts'
import { refusal, type ImportResult } from '../inputs/tables.ts'
import type { InputProblem } from '../util/csv.ts'
import { checkDocument, type DocumentInput, ItemError, type ItemProblem } from './document.ts'
import { readFeed } from './feed.ts'
import { linesOfFile } from './lines.ts'
import { LineParser, writeFileInParallel } from './parse-pool.ts'
import { createProgress } from './progress.ts'
import { type LineKind, documentFromLine, requestsFromCsv } from './readers.ts'
import { decodeBytes } from './text.ts'
import { BatchWriter } from './writer.ts'
import { readFailure } from '../errors.ts'

type Kind = 'postings' | 'requests'

function toInputProblem(p: ItemProblem): InputProblem {
  return { file: p.file, line: p.line ?? 0, column: p.field, reason: p.item ? `item ${p.item}: ${p.reason}` : p.reason }
}

interface Checked {
  /** documents with their lines, kept for the write; null for JSON Lines read again to store (on the parse worker) */
  docs: { line?: number; doc: DocumentInput }[] | null
  problems: ItemProblem[]
  read: number
  fatal: ItemProblem | null
}

/**
 * The check pass over a JSON Lines file (or its lines up to `endOffset`). With `keep`, the parsed
 * documents are kept for the write (every one that parsed, as the write pass would have read them;
 * the writer checks each again): a file the size of an incremental import (10,000 postings, 23 MB)
 * is then parsed once instead of twice (0.4 s).
 */
function checkJsonLines(file: string, kind: LineKind, maxTextChars: number, endOffset: number | null = null, keep = false): Checked & { nextLine: number } {
  const problems: ItemProblem[] = []
  const docs: { line: number; doc: DocumentInput }[] | null = keep ? [] : null
  let read = 0
  let nextLine = 1
  for (const l of linesOfFile(file)) {
    if (endOffset !== null && l.end > endOffset) break
    nextLine = l.line + 1
    try {
      const doc = documentFromLine(l, kind)
      if (!doc) continue
      docs?.push({ line: l.line, doc })
      checkDocument(doc, maxTextChars)
      read++
    } catch (err) {
      if (!(err instanceof ItemError)) throw err
      problems.push({ file, line: l.line, field: err.field, reason: err.message })
    }
  }
  return { docs, problems, read: read + problems.length, fatal: null, nextLine }
}

/** The byte after the first line break at or after `at` (null when there is none). */
function lineStartAfter(file: string, at: number): number | null {
  const fd = fs.openSync(file, 'r')
  try {
    const buf = Buffer.alloc(1 << 16)
    for (let pos = at; ; pos += buf.length) {
      const n = fs.readSync(fd, buf, 0, buf.length, pos)
      if (n === 0) return null
      const nl = buf.subarray(0, n).indexOf(0x0a)
      if (nl !== -1) return pos + nl + 1
    }
  } finally {
    fs.closeSync(fd)
  }
}

/**
 * The check pass on two threads: the main thread checks the first half of the file while the
 * worker checks the rest; the worker's line numbers are shifted once the first half's are known.
 */
async function checkJsonLinesInParallel(parser: LineParser, file: string, size: number, kind: LineKind, maxTextChars: number): Promise<Checked> {
  const mid = lineStartAfter(file, Math.floor(size / 2))
  if (mid === null || mid >= size) return checkJsonLines(file, kind, maxTextChars)
  const rest = parser.checkRange(file, kind, mid, 1)
  let first: ReturnType<typeof checkJsonLines>
  try {
    first = checkJsonLines(file, kind, maxTextChars, mid)
  } finally {
    // the worker's answer is awaited below; a failure here must not leave it unhandled
    rest.catch(() => {})
  }
  const second = await rest
  const shift = first.nextLine - 1
  const problems = [...first.problems, ...second.problems.map((p) => ({ file, line: p.line + shift, field: p.field, reason: p.reason }))]
  return { docs: null, problems, read: first.read + second.read + second.problems.length, fatal: null }
}

async function checkWhole(file: string, kind: Kind, maxTextChars: number): Promise<Checked> {
  const bytes = fs.readFileSync(file)
  const decoded = decodeBytes(bytes)
  let docs: { line?: number; doc: DocumentInput }[]
  let problems: ItemProblem[]
  if (kind === 'postings') {
    const feed = await readFeed(decoded.text, file, new Date().toISOString())
    if (feed.fatal) return { docs: [], problems: [], read: 0, fatal: { file, line: 1, reason: feed.fatal } }
    docs = feed.items
    // caveats (estimated dates) are reported but do not make the file bad
    problems = feed.problems
    if (decoded.invalidAt !== null) {
      docs = docs.filter(({ line, doc }) => {
        const bad = `${doc.title}${doc.body}${doc.externalId}`.includes('\ufffd')
        if (bad) problems.push({ file, line, item: doc.externalId.slice(0, 200), reason: 'not valid UTF-8' })
        return !bad
      })
    }
  } else {
    const csv = requestsFromCsv(decoded.text, file, decoded.invalidAt !== null)
    if (csv.fatal) return { docs: [], problems: [], read: 0, fatal: csv.fatal }
    docs = csv.rows
    problems = csv.problems
  }
  const good: typeof docs = []
  for (const d of docs) {
    try {
      checkDocument(d.doc, maxTextChars)
      good.push(d)
    } catch (err) {
      if (!(err instanceof ItemError)) throw err
      problems.push({ file, line: d.line, item: d.doc.externalId.slice(0, 200), field: err.field, reason: err.message })
    }
  }
  const bad = problems.filter((p) => !p.warning).length
  return { docs: good, problems, read: good.length + bad, fatal: null }
}

/** Imports one postings or requests file. */
export async function importDocuments(db: Db, config: Config, kind: Kind, file: string, opts: Pick<ImportOptions, 'skipBad'> & { log?: (m: string) => void }): Promise<ImportResult> {
  const refuse = (problems: InputProblem[]): ImportResult => refusal(kind, file, problems, 'whole')
  let stat: fs.Stats
  try {
    stat = fs.statSync(file)
  } catch (err) {
    return refuse([{ file, line: 0, reason: `cannot read: ${readFailure(err)}` }])
  }
  if (!stat.isFile()) return refuse([{ file, line: 0, reason: 'not a file' }])
  const ext = path.extname(file).toLowerCase()
  const lines = ext === '.jsonl' || ext === '.ndjson'
  const whole = kind === 'postings' ? ['.xml', '.rss', '.atom'].includes(ext) : ext === '.csv'
  if (!lines && !whole) {
    return refuse([{ file, line: 0, reason: kind === 'postings' ? 'expected a .jsonl (JobPosting JSON Lines) or .xml/.rss/.atom (feed) file' : 'expected a .csv or .jsonl request log' }])
  }
  // large JSON Lines files: checked on both threads, then read and analysed on the worker while
  // the main thread stores
  const parallel = lines && config.ingest.parseWorkerMinBytes !== null && stat.size >= config.ingest.parseWorkerMinBytes
  const parser = parallel ? await LineParser.start({ dedupe: config.ingest.dedupe, maxTextChars: config.ingest.maxTextChars }, config.ingest.batchSize) : null
  try {
    return await importChecked(db, config, kind, file, opts, parser, stat.size, lines)
  } finally {
    await parser?.close()
  }
}

async function importChecked(db: Db, config: Config, kind: Kind, file: string, opts: Pick<ImportOptions, 'skipBad'> & { log?: (m: string) => void }, parser: LineParser | null, size: number, lines: boolean): Promise<ImportResult> {
  const maxText = config.ingest.maxTextChars
  // JSON Lines below the parse worker's size are parsed once, in the check, and kept for the write
  const checked = !lines ? await checkWhole(file, kind, maxText) : parser ? await checkJsonLinesInParallel(parser, file, size, kind, maxText) : checkJsonLines(file, kind, maxText, null, true)
  if (checked.fatal) return refusal(kind, file, [toInputProblem(checked.fatal)], 'whole')
  const bad = checked.problems.filter((p) => !p.warning).length
  const problems = checked.problems.map(toInputProblem)
  if (bad > 0 && !opts.skipBad) return refusal(kind, file, problems, { read: checked.read })

  const sourceId = `import:${kind}`
  upsertSource(db, { id: sourceId, kind: 'import', location: `tides import ${kind}` })
  const runId = startRun(db, 'ingest', 'import', sourceId)
  const progress = createProgress(`import ${path.basename(file)}`)
  const writer = new BatchWriter(db, config, sourceId, runId, (c) => progress.update(c.read))
  try {
    if (checked.docs) for (const { line, doc } of checked.docs) writer.add(doc, { file, line })
    else if (parser) {
      // bad lines were reported by the check above; here they are only skipped
      await writeFileInParallel(parser, file, { offset: 0, line: 1 }, kind, writer, file, () => undefined, undefined, false)
    }
    writer.finish()
  } catch (err) {
    finishRun(db, runId, 'failed', writer.counts, (err as Error).message, { file })
    throw err
  } finally {
    progress.done()
  }
  const c = writer.counts
  finishRun(db, runId, bad > 0 ? 'partial' : 'ok', { ...c, read: checked.read, rejected: bad }, null, { file, ...c, rejected: bad, problems: checked.problems.slice(0, 100), problemCount: checked.problems.length })
  const stored = c.new + c.duplicate - c.alreadyStored
  opts.log?.(`${file}: ${c.new} new, ${c.duplicate} duplicate (${c.alreadyStored} already stored, ${c.exactText + c.nearDuplicate} reposts)${c.dateEstimated ? `, ${c.dateEstimated} with estimated dates` : ''}`)
  return { kind, file, read: checked.read, imported: stored, skipped: bad, problems, refused: false }
}
