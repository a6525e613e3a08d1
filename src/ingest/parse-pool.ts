/**
 * @module ingest/parse-pool
 * Parsing on a second core for large JSON Lines inputs: one worker thread reads the file, parses
 * its lines and computes their dedupe analysis while the main thread stores documents. Results
 * come back in file order, so cursors, problems and dedupe decisions are exactly those of the
 * single-threaded path (tested by comparing database contents). The worker also checks part of a
 * file for `tides import`'s first pass while the main thread checks the rest.
 */
import type { Worker } from 'node:worker_threads'
import { startTsWorker } from '../util/ts-worker.ts'
import type { Analysis, DedupeParams } from './dedupe.ts'
import type { DocumentInput } from './document.ts'
import type { Line } from './lines.ts'
import type { LineKind } from './readers.ts'
import type { BatchWriter } from './writer.ts'

export interface ParserSetup {
  dedupe: DedupeParams
  maxTextChars: number
}

/** A range of a file for the worker to read: parsed and analysed, or only checked. */
export interface FileRequest {
  id: number
  file: string
  kind: LineKind
  /** byte offset (at a line start) and its line number */
  offset: number
  firstLine: number
  /** stop before the first line that ends after this offset; null = read to the end */
  endOffset: number | null
  mode: 'parse' | 'check'
  /** one Int32: chunks the reader may still send (raised by the main thread as it consumes them) */
  credit: SharedArrayBuffer
}

/** What a check of a range found. */
export interface CheckResult {
  /** good lines (blank lines not counted) */
  read: number
  problems: { line: number; field?: string; reason: string }[]
  /** the line number after the last line read */
  nextLine: number
}

export interface ParsedLine {
  line: number
  /** byte offset after the line and whether it had a line break (see Line) */
  end?: number
  terminated?: boolean
  doc?: DocumentInput
  /** index of its analysis in the chunk's packed analyses */
  analysis?: number
  problem?: { field?: string; reason: string }
}

/** The analyses of a chunk in a few flat arrays (transferred, not copied). */
export interface PackedAnalyses {
  hashes: string[]
  /** 1 when analysis i has a signature (and band keys) */
  flags: Uint8Array
  sigs: Uint32Array
  keys: Uint32Array
  /** end offset of analysis i's shingles in `shingles` */
  shingleEnds: Uint32Array
  shingles: Uint32Array
}

export interface ParseResponse {
  id: number
  out?: ParsedLine[]
  packed?: PackedAnalyses
  /** the range is finished */
  done?: CheckResult
  error?: string
}

/** Analysis i of a packed chunk, as views into the packed arrays (no copies). */
export function unpackAnalysis(p: PackedAnalyses, i: number, k: number, bands: number): Analysis {
  const start = i === 0 ? 0 : p.shingleEnds[i - 1]!
  const has = p.flags[i] === 1
  return {
    textHash: p.hashes[i]!,
    shingles: p.shingles.subarray(start, p.shingleEnds[i]!),
    signature: has ? p.sigs.subarray(i * k, (i + 1) * k) : null,
    keys: has ? Array.from(p.keys.subarray(i * bands, (i + 1) * bands)) : null,
  }
}

/** Lines per message: large enough that messaging costs little, small enough to keep both threads busy. */
export const CHUNK_LINES = 1000

export interface ParsedChunk {
  out: ParsedLine[]
  packed: PackedAnalyses
}

/**
 * Chunks a reader may send ahead of the main thread, at least. The writer stores a batch at a time
 * (ingest.batchSize documents in one transaction); while it commits one, the worker can analyse the
 * next only as far as its credit goes, and the writer then waits for the rest. So the credit covers
 * a whole batch (see start): with 3 chunks against batches of 10,000, the 1M benchmark's ingest
 * fell from about 10,000 to 7,526 documents/s.
 */
const MIN_AHEAD = 3

interface Stream {
  chunks: ParsedChunk[]
  done: CheckResult | null
  error: Error | null
  wake: (() => void) | null
  credit: Int32Array
}

export class LineParser {
  private readonly streams = new Map<number, Stream>()
  private nextId = 0
  private failure: Error | null = null

  private constructor(
    private readonly worker: Worker,
    readonly setup: ParserSetup,
    private readonly ahead: number,
  ) {
    worker.on('message', (msg: ParseResponse) => {
      const st = this.streams.get(msg.id)
      if (!st) return
      if (msg.error !== undefined) st.error = new Error(`parse worker: ${msg.error}`)
      else if (msg.done) st.done = msg.done
      else st.chunks.push({ out: msg.out ?? [], packed: msg.packed! })
      st.wake?.()
    })
    worker.on('error', (err) => {
      this.failure = err
      for (const st of this.streams.values()) {
        st.error = err
        st.wake?.()
      }
    })
  }

  /**
   * Starts the worker and waits until it is ready.
   * @param batchDocs documents the caller stores per transaction: the reader may run a batch ahead
   */
  static async start(setup: ParserSetup, batchDocs = 0): Promise<LineParser> {
    const worker = startTsWorker(new URL('./parse-worker.ts', import.meta.url), setup)
    await new Promise<void>((resolve, reject) => {
      const onFirst = (msg: ParseResponse) => {
        if (msg.id !== -1) return
        worker.off('message', onFirst)
        worker.off('error', reject)
        resolve()
      }
      worker.on('message', onFirst)
      worker.once('error', reject)
    })
    return new LineParser(worker, setup, Math.max(MIN_AHEAD, Math.ceil(batchDocs / CHUNK_LINES) + 1))
  }

  private open(req: Omit<FileRequest, 'id' | 'credit'>): { id: number; st: Stream } {
    if (this.failure) throw this.failure
    const id = this.nextId++
    const credit = new SharedArrayBuffer(4)
    const st: Stream = { chunks: [], done: null, error: null, wake: null, credit: new Int32Array(credit) }
    st.credit[0] = this.ahead
    this.streams.set(id, st)
    this.worker.postMessage({ ...req, id, credit } satisfies FileRequest)
    return { id, st }
  }

  private static next(st: Stream): Promise<void> {
    return new Promise((resolve) => (st.wake = resolve))
  }

  /** Parses and analyses a file from `offset` on; chunks of results in file order. */
  async *parseFile(file: string, kind: LineKind, offset: number, firstLine: number): AsyncGenerator<ParsedChunk> {
    const { id, st } = this.open({ file, kind, offset, firstLine, endOffset: null, mode: 'parse' })
    try {
      for (;;) {
        const chunk = st.chunks.shift()
        if (chunk) {
          Atomics.add(st.credit, 0, 1)
          Atomics.notify(st.credit, 0)
          yield chunk
          continue
        }
        if (st.error) throw st.error
        if (st.done) return
        await LineParser.next(st)
      }
    } finally {
      // a consumer that stopped early leaves the reader free to finish
      Atomics.store(st.credit, 0, 1 << 30)
      Atomics.notify(st.credit, 0)
      this.streams.delete(id)
    }
  }

  /** Checks the lines of a file range (as import's first pass does); line numbers from `firstLine`. */
  async checkRange(file: string, kind: LineKind, offset: number, firstLine: number, endOffset: number | null = null): Promise<CheckResult> {
    const { id, st } = this.open({ file, kind, offset, firstLine, endOffset, mode: 'check' })
    try {
      while (!st.done) {
        if (st.error) throw st.error
        await LineParser.next(st)
      }
      return st.done
    } finally {
      this.streams.delete(id)
    }
  }

  async close(): Promise<void> {
    // a reader waiting for credit is released first, then the thread ends
    for (const st of this.streams.values()) {
      Atomics.store(st.credit, 0, 1 << 30)
      Atomics.notify(st.credit, 0)
    }
    await this.worker.terminate()
  }
}

/**
 * Reads a JSON Lines file on the worker and feeds its documents into the writer, in file order.
 * @param cursorOf the resume point after a line (undefined: do not move it)
 * @param reportProblems false when the lines were checked before and their problems reported
 */
export async function writeFileInParallel(
  parser: LineParser,
  file: string,
  start: { offset: number; line: number },
  kind: LineKind,
  writer: BatchWriter,
  where: string,
  cursorOf: (l: Pick<Line, 'line' | 'end' | 'terminated'>) => string | undefined,
  onLine?: (l: Pick<Line, 'line' | 'end' | 'terminated'>) => void,
  reportProblems = true,
): Promise<void> {
  const { numHashes: k, bands } = parser.setup.dedupe
  for await (const { out, packed } of parser.parseFile(file, kind, start.offset, start.line)) {
    for (const r of out) {
      const l = { line: r.line, end: r.end!, terminated: r.terminated! }
      const cursor = cursorOf(l)
      if (r.problem) {
        if (reportProblems) writer.problem({ file: where, line: r.line, field: r.problem.field, reason: r.problem.reason })
        if (cursor !== undefined) writer.advance(cursor)
      } else if (r.doc) writer.add(r.doc, { file: where, line: r.line }, cursor, unpackAnalysis(packed, r.analysis!, k, bands))
      else if (cursor !== undefined) writer.advance(cursor)
      onLine?.(l)
    }
  }
}
