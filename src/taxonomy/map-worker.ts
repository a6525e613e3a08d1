/**
 * @module taxonomy/map-worker
 * Worker-thread side of the mapper pool: builds the matcher once from the taxonomy it is given,
 * then maps batches of documents on request, answering with their mention rows encoded as one
 * transferable Int32Array (cloning the full results costs more than mapping them).
 */
import { parentPort, workerData } from 'node:worker_threads'
import { Matcher } from './matcher.ts'
import { emptyRules, parseRules } from './rules.ts'
import type { MapperSource, WorkerRequest, WorkerResponse } from './parallel.ts'
import { encodeRows, mentionRows } from './rows.ts'

const source = workerData as MapperSource
const rules = source.rulesText ? parseRules(source.rulesText, source.rulesFile) : emptyRules()
const matcher = Matcher.build({ concepts: source.concepts, byId: new Map(source.concepts.map((c) => [c.id, c])) }, rules, { commonWords: new Set(source.commonWords) })

parentPort!.on('message', (req: WorkerRequest) => {
  try {
    const rows = encodeRows(matcher, req.inputs.map((input) => mentionRows(matcher.map(input, { spans: false }))))
    parentPort!.postMessage({ id: req.id, rows } satisfies WorkerResponse, [rows.buffer as ArrayBuffer])
  } catch (err) {
    parentPort!.postMessage({ id: req.id, error: err instanceof Error ? err.message : String(err) } satisfies WorkerResponse)
  }
})
parentPort!.postMessage({ id: -1 } satisfies WorkerResponse)
