/**
 * @module ingest/parse-worker
 * Worker-thread side of the line parser: turns batches of JSON Lines lines into documents with
 * their dedupe analysis (text hash, shingles, MinHash signature, band keys), so that the main
 * thread only has to store them. Uses exactly the functions the main thread would use.
 */
import { parentPort, workerData } from 'node:worker_threads'
import { analyseDocument } from './dedupe.ts'
import { checkDocument, ItemError } from './document.ts'
import type { ParseRequest, ParseResponse, ParsedLine, ParserSetup } from './parse-pool.ts'
import { documentFromLine } from './readers.ts'

const setup = workerData as ParserSetup

parentPort!.on('message', (req: ParseRequest) => {
  const out: ParsedLine[] = []
  try {
    for (const l of req.lines) {
      try {
        const doc = documentFromLine(l, req.kind)
        if (!doc) out.push({ line: l.line })
        else {
          checkDocument(doc, setup.maxTextChars)
          out.push({ line: l.line, doc, analysis: analyseDocument(doc, setup.dedupe) })
        }
      } catch (err) {
        if (!(err instanceof ItemError)) throw err
        out.push({ line: l.line, problem: { field: err.field, reason: err.message } })
      }
    }
    parentPort!.postMessage({ id: req.id, out } satisfies ParseResponse)
  } catch (err) {
    parentPort!.postMessage({ id: req.id, error: err instanceof Error ? (err.stack ?? err.message) : String(err) } satisfies ParseResponse)
  }
})
parentPort!.postMessage({ id: -1 } satisfies ParseResponse)
