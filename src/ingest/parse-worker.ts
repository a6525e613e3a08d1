/**
 * @module ingest/parse-worker
 * Worker-thread side of the line parser: turns batches of JSON Lines lines into documents with
 * their dedupe analysis (text hash, shingles, MinHash signature, band keys), so that the main
 * thread only has to store them. Uses exactly the functions the main thread would use. The
 * analyses travel back packed in a few transferred typed arrays, not as thousands of small ones.
 */
import { parentPort, workerData } from 'node:worker_threads'
import { analyseDocument } from './dedupe.ts'
import { checkDocument, ItemError } from './document.ts'
import type { PackedAnalyses, ParseRequest, ParseResponse, ParsedLine, ParserSetup } from './parse-pool.ts'
import { documentFromLine } from './readers.ts'

const setup = workerData as ParserSetup
const k = setup.dedupe.numHashes
const bands = setup.dedupe.bands

parentPort!.on('message', (req: ParseRequest) => {
  const out: ParsedLine[] = []
  const hashes: string[] = []
  const sigs: Uint32Array[] = []
  const keys: number[][] = []
  const shingles: Uint32Array[] = []
  try {
    req.texts.forEach((text, i) => {
      const line = req.lines[i]!
      try {
        const doc = documentFromLine({ line, text, end: 0, terminated: true, invalidAt: req.invalidAt[i], tooLong: req.tooLong[i] === 1 } as never, req.kind)
        if (!doc) {
          out.push({ line })
          return
        }
        checkDocument(doc, setup.maxTextChars)
        const a = analyseDocument(doc, setup.dedupe)
        out.push({ line, doc, analysis: hashes.length })
        hashes.push(a.textHash)
        sigs.push(a.signature ?? new Uint32Array(0))
        keys.push(a.keys ?? [])
        shingles.push(a.shingles)
      } catch (err) {
        if (!(err instanceof ItemError)) throw err
        out.push({ line, problem: { field: err.field, reason: err.message } })
      }
    })
    const packed = pack(hashes, sigs, keys, shingles)
    parentPort!.postMessage({ id: req.id, out, packed } satisfies ParseResponse, [packed.sigs.buffer, packed.keys.buffer, packed.shingleEnds.buffer, packed.shingles.buffer, packed.flags.buffer] as ArrayBuffer[])
  } catch (err) {
    parentPort!.postMessage({ id: req.id, error: err instanceof Error ? (err.stack ?? err.message) : String(err) } satisfies ParseResponse)
  }
})

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
