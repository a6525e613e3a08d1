/**
 * @module taxonomy/candidate-worker
 * Worker-thread side of candidatesInBackground (parallel.ts): builds the matcher from the taxonomy
 * it is given, computes the candidate list from the database file over its own read-only
 * connection, and answers with the result once (the main thread stores it).
 */
import { parentPort, workerData } from 'node:worker_threads'
import Database from 'better-sqlite3'
import { matcherFromSource, type CandidateWorkerData } from './parallel.ts'
import { computeCandidates } from './stage.ts'

const { source, config } = workerData as CandidateWorkerData
try {
  if (!source.dbFile) throw new Error('no database file to read the documents from')
  const db = new Database(source.dbFile, { readonly: true, fileMustExist: true })
  try {
    parentPort!.postMessage({ result: computeCandidates(db, config, matcherFromSource(source)) })
  } finally {
    db.close()
  }
} catch (err) {
  parentPort!.postMessage({ error: err instanceof Error ? err.message : String(err) })
}
