/**
 * @module ingest/parse-worker
 * Worker-thread side of the line parser: reads a range of a JSON Lines file itself and turns its
 * lines into documents with their dedupe analysis (text hash, shingles, MinHash signature, band
 * keys), so that the main thread only has to store them; or only checks the lines (the first pass
 * of `tides import`). Uses exactly the functions the main thread would use. The analyses travel
 * back packed in a few transferred typed arrays, not as thousands of small ones.
 */
import { parentPort, workerData } from 'node:worker_threads'
import { analyseDocument } from './dedupe.ts'
import { checkDocument, ItemError } from './document.ts'
import { linesOfFile } from './lines.ts'
import { CHUNK_LINES, type FileRequest, type PackedAnalyses, type ParseResponse, type ParsedLine, type ParserSetup } from './parse-pool.ts'
import { documentFromLine } from './readers.ts'

const setup = workerData as ParserSetup
const k = setup.dedupe.numHashes
const bands = setup.dedupe.bands

parentPort!.on('message', (msg: FileRequest) => readFile(msg))

/** One line to a result (and its analysis pushed onto the chunk's arrays). */
function parseOne(text: string | null, line: number, kind: FileRequest['kind'], invalidAt: number | undefined, tooLong: boolean, acc: Acc): ParsedLine {
  try {
    const doc = documentFromLine({ line, text, end: 0, terminated: true, invalidAt, tooLong } as never, kind)
    if (!doc) return { line }
    checkDocument(doc, setup.maxTextChars)
    const a = analyseDocument(doc, setup.dedupe)
    const r: ParsedLine = { line, doc, analysis: acc.hashes.length }
    acc.hashes.push(a.textHash)
    acc.sigs.push(a.signature ?? new Uint32Array(0))
    acc.keys.push(a.keys ?? [])
    acc.shingles.push(a.shingles)
    return r
  } catch (err) {
    if (!(err instanceof ItemError)) throw err
    return { line, problem: { field: err.field, reason: err.message } }
  }
}

interface Acc {
  hashes: string[]
  sigs: Uint32Array[]
  keys: number[][]
  shingles: Uint32Array[]
}

const newAcc = (): Acc => ({ hashes: [], sigs: [], keys: [], shingles: [] })

/**
 * Reads a file range itself and streams chunks of results (`check`: only the problems). Flow
 * control: a chunk is sent only while the reader has credit (a shared counter the main thread
 * raises as it consumes chunks), so at most a few chunks wait in memory.
 */
function readFile(req: FileRequest): void {
  const credit = new Int32Array(req.credit)
  const problems: { line: number; field?: string; reason: string }[] = []
  let read = 0
  let nextLine = req.firstLine
  try {
    let out: ParsedLine[] = []
    let acc = newAcc()
    const send = () => {
      while (Atomics.load(credit, 0) <= 0) Atomics.wait(credit, 0, 0)
      Atomics.sub(credit, 0, 1)
      const packed = pack(acc.hashes, acc.sigs, acc.keys, acc.shingles)
      parentPort!.postMessage({ id: req.id, out, packed } satisfies ParseResponse, [packed.sigs.buffer, packed.keys.buffer, packed.shingleEnds.buffer, packed.shingles.buffer, packed.flags.buffer] as ArrayBuffer[])
      out = []
      acc = newAcc()
    }
    for (const l of linesOfFile(req.file, req.offset, req.firstLine)) {
      if (req.endOffset !== null && l.end > req.endOffset) break
      nextLine = l.line + 1
      if (req.mode === 'check') {
        // what import.ts's check does on the main thread
        try {
          const doc = documentFromLine(l, req.kind)
          if (!doc) continue
          checkDocument(doc, setup.maxTextChars)
          read++
        } catch (err) {
          if (!(err instanceof ItemError)) throw err
          problems.push({ line: l.line, field: err.field, reason: err.message })
        }
        continue
      }
      const r = parseOne(l.text, l.line, req.kind, l.invalidAt, l.tooLong === true, acc)
      r.end = l.end
      r.terminated = l.terminated
      out.push(r)
      if (out.length === CHUNK_LINES) send()
    }
    if (out.length) send()
    parentPort!.postMessage({ id: req.id, done: { read, problems, nextLine } } satisfies ParseResponse)
  } catch (err) {
    parentPort!.postMessage({ id: req.id, error: err instanceof Error ? (err.stack ?? err.message) : String(err) } satisfies ParseResponse)
  }
}

function pack(hashes: string[], sigs: Uint32Array[], keys: number[][], shingles: Uint32Array[]): PackedAnalyses {
  const n = hashes.length
  const p: PackedAnalyses = {
    hashes,
    flags: new Uint8Array(n),
    sigs: new Uint32Array(n * k),
    keys: new Uint32Array(n * bands),
    shingleEnds: new Uint32Array(n),
    shingles: new Uint32Array(shingles.reduce((s, x) => s + x.length, 0)),
  }
  let at = 0
  for (let i = 0; i < n; i++) {
    if (sigs[i]!.length === k) {
      p.flags[i] = 1
      p.sigs.set(sigs[i]!, i * k)
      p.keys.set(keys[i]!, i * bands)
    }
    p.shingles.set(shingles[i]!, at)
    at += shingles[i]!.length
    p.shingleEnds[i] = at
  }
  return p
}

parentPort!.postMessage({ id: -1 } satisfies ParseResponse)
