/**
 * @module taxonomy/map-worker
 * Worker-thread side of the mapper pool: builds the matcher once from the taxonomy it is given,
 * then maps batches of documents on request.
 */
import { parentPort, workerData } from 'node:worker_threads'
import { Matcher } from './matcher.ts'
import { emptyRules, parseRules } from './rules.ts'
import type { MapperSource, WorkerRequest, WorkerResponse } from './parallel.ts'

const source = workerData as MapperSource
const rules = source.rulesText ? parseRules(source.rulesText, source.rulesFile) : emptyRules()
const matcher = Matcher.build({ concepts: source.concepts, byId: new Map(source.concepts.map((c) => [c.id, c])) }, rules, { commonWords: new Set(source.commonWords) })

parentPort!.on('message', (req: WorkerRequest) => {
  try {
    const results = req.inputs.map((input) => matcher.map(input))
    parentPort!.postMessage({ id: req.id, results } satisfies WorkerResponse)
  } catch (err) {
    parentPort!.postMessage({ id: req.id, error: err instanceof Error ? err.message : String(err) } satisfies WorkerResponse)
  }
})
parentPort!.postMessage({ id: -1, results: [] } satisfies WorkerResponse)
