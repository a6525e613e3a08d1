/**
 * @module taxonomy/map-worker
 * Worker-thread side of the mapper pool: builds the matcher once from the taxonomy it is given,
 * then maps batches of documents on request, answering with their mention rows encoded as one
 * transferable Int32Array (cloning the full results costs more than mapping them).
 */
import { parentPort, workerData } from 'node:worker_threads'
import Database from 'better-sqlite3'
import { unmappedBetween } from '../db/taxonomy.ts'
import { matcherFromSource, type MapperSource, type WorkerRequest, type WorkerResponse } from './parallel.ts'
import { documentInput, encodeRows, storedRows } from './rows.ts'

const source = workerData as MapperSource
const matcher = matcherFromSource(source)
// reading the texts here spares the main thread (which writes) the strings and their cloning
const store = source.dbFile ? new Database(source.dbFile, { readonly: true, fileMustExist: true }) : null

parentPort!.on('message', (req: WorkerRequest) => {
  try {
    let inputs = req.inputs ?? []
    let ids: Float64Array | undefined
    if (req.stored) {
      if (!store) throw new Error('no database file to read the documents from')
      const docs = unmappedBetween(store, req.stored.first, req.stored.last)
      ids = new Float64Array(docs.map((d) => d.id))
      inputs = docs.map(documentInput)
    }
    const rows = encodeRows(matcher, inputs.map((input) => storedRows(matcher, input)))
    const res: WorkerResponse = { id: req.id, rows, ...(ids ? { ids } : {}) }
    parentPort!.postMessage(res, ids ? [rows.buffer as ArrayBuffer, ids.buffer as ArrayBuffer] : [rows.buffer as ArrayBuffer])
  } catch (err) {
    parentPort!.postMessage({ id: req.id, error: err instanceof Error ? err.message : String(err) } satisfies WorkerResponse)
  }
})
parentPort!.postMessage({ id: -1 } satisfies WorkerResponse)
