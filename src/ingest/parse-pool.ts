/**
 * @module ingest/parse-pool
 * Parsing on a second core for large JSON Lines inputs: the main thread reads lines and stores
 * documents while one worker thread parses the next chunk of lines and computes their dedupe
 * analysis. Results come back in order, so cursors, problems and dedupe decisions are exactly
 * those of the single-threaded path (tested by comparing database contents).
 */
import { Worker } from 'node:worker_threads'
import type { Analysis, DedupeParams } from './dedupe.ts'
import type { DocumentInput } from './document.ts'
import type { Line } from './lines.ts'
import type { LineKind } from './readers.ts'
import type { BatchWriter } from './writer.ts'

export interface ParserSetup {
  dedupe: DedupeParams
  maxTextChars: number
}

/** A chunk of lines, sent as flat arrays (cheaper to clone than line objects). */
export interface ParseRequest {
  id: number
  kind: LineKind
  lines: Int32Array
  texts: (string | null)[]
  invalidAt: (number | undefined)[]
  tooLong: Uint8Array
}

export interface ParsedLine {
  line: number
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

export class LineParser {
  private readonly waiting = new Map<number, { resolve: (r: ParsedChunk) => void; reject: (e: Error) => void }>()
  private nextId = 0
  private failure: Error | null = null

  private constructor(
    private readonly worker: Worker,
    readonly setup: ParserSetup,
  ) {
    worker.on('message', (msg: ParseResponse) => {
      const w = this.waiting.get(msg.id)
      if (!w) return
      this.waiting.delete(msg.id)
      if (msg.error !== undefined) w.reject(new Error(`parse worker: ${msg.error}`))
      else w.resolve({ out: msg.out ?? [], packed: msg.packed! })
    })
    worker.on('error', (err) => {
      this.failure = err
      for (const w of this.waiting.values()) w.reject(err)
      this.waiting.clear()
    })
  }

  /** Starts the worker and waits until it is ready. */
  static async start(setup: ParserSetup): Promise<LineParser> {
    // The worker runs the TypeScript sources too: register tsx inside it first (hooks given with
    // --import do not reach a worker's entry module on Node 20), then import the worker module.
    const target = new URL('./parse-worker.ts', import.meta.url).href
    const api = import.meta.resolve('tsx/esm/api')
    const bootstrap = `import(${JSON.stringify(api)}).then((m) => { m.register(); return import(${JSON.stringify(target)}) })`
    const worker = new Worker(bootstrap, { eval: true, workerData: setup })
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
    return new LineParser(worker, setup)
  }

  parse(kind: LineKind, lines: Line[]): Promise<ParsedChunk> {
    if (this.failure) return Promise.reject(this.failure)
    return new Promise((resolve, reject) => {
      const id = this.nextId++
      this.waiting.set(id, { resolve, reject })
      const req: ParseRequest = {
        id,
        kind,
        lines: Int32Array.from(lines, (l) => l.line),
        texts: lines.map((l) => l.text),
        invalidAt: lines.map((l) => l.invalidAt),
        tooLong: Uint8Array.from(lines, (l) => ((l as { tooLong?: boolean }).tooLong ? 1 : 0)),
      }
      this.worker.postMessage(req, [req.lines.buffer as ArrayBuffer, req.tooLong.buffer as ArrayBuffer])
    })
  }

  async close(): Promise<void> {
    await this.worker.terminate()
  }
}

/**
 * Feeds lines through the worker into the writer, in order, keeping up to three chunks in flight.
 * @param cursorOf the resume point after a line (undefined: do not move it)
 * @param reportProblems false when the lines were checked before and their problems reported
 */
export async function writeLinesInParallel(
  parser: LineParser,
  lines: Iterable<Line>,
  kind: LineKind,
  writer: BatchWriter,
  file: string,
  cursorOf: (l: Line) => string | undefined,
  onLine?: (l: Line) => void,
  reportProblems = true,
): Promise<void> {
  const queue: { lines: Line[]; result: Promise<ParsedChunk> }[] = []
  const { numHashes: k, bands } = parser.setup.dedupe
  const drain = async (keep: number) => {
    while (queue.length > keep) {
      const c = queue.shift()!
      const { out: results, packed } = await c.result
      results.forEach((r, i) => {
        const l = c.lines[i]!
        const cursor = cursorOf(l)
        if (r.problem) {
          if (reportProblems) writer.problem({ file, line: r.line, field: r.problem.field, reason: r.problem.reason })
          if (cursor !== undefined) writer.advance(cursor)
        } else if (r.doc) writer.add(r.doc, { file, line: r.line }, cursor, unpackAnalysis(packed, r.analysis!, k, bands))
        else if (cursor !== undefined) writer.advance(cursor)
        onLine?.(l)
      })
    }
  }
  let chunk: Line[] = []
  try {
    for (const l of lines) {
      chunk.push(l)
      if (chunk.length === CHUNK_LINES) {
        queue.push({ lines: chunk, result: parser.parse(kind, chunk) })
        chunk = []
        await drain(2)
      }
    }
    if (chunk.length) queue.push({ lines: chunk, result: parser.parse(kind, chunk) })
    await drain(0)
  } finally {
    // results still in flight after an error are not wanted; their rejections are not either
    for (const c of queue) c.result.catch(() => {})
  }
}
