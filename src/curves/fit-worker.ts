/**
 * @module curves/fit-worker
 * Worker-thread side of fit-threads.ts: waits for the run's skills, claims chunks of them and
 * describes them (first half), answers with their p-values; then, given the adjusted p-values,
 * decides them and answers with their rows and events, one message per chunk (second half).
 */
import { parentPort, workerData } from 'node:worker_threads'
import { decideSkills, describeSkills, familyPValues } from './fit-all.ts'
import type { DescribedSkill } from './fit-skill.ts'
import type { DescribedChunk, FinishedChunk, FinishMessage, FitStart, FitWorkerData } from './fit-threads.ts'
import { fittedRows } from './rows.ts'

const { cursor: buffer, slot } = workerData as FitWorkerData
const port = parentPort!
const cursor = new Int32Array(buffer)

/** Reports a failure instead of the answer the stage's thread waits for. */
function guarded(work: () => void): void {
  try {
    work()
  } catch (error) {
    port.postMessage({ error: error instanceof Error ? error.message : String(error) })
  }
}

// the run, then the adjusted p-values (one listener: one added while a message is being handed out
// may be handed the same message)
let run: { start: FitStart; kept: Map<number, DescribedSkill[]> } | null = null
port.on('message', (message: FitStart | FinishMessage) =>
  guarded(() => {
    if (!run) run = { start: message as FitStart, kept: describe(message as FitStart) }
    else finish(run.start, run.kept, message as FinishMessage)
  }),
)

/** First half: claims chunks until none is left, answers with their p-values; keeps the described skills. */
function describe({ inputs, config, lastMonth, chunk }: FitStart): Map<number, DescribedSkill[]> {
  const chunks = Math.ceil(inputs.length / chunk)
  const kept = new Map<number, DescribedSkill[]>()
  const described: DescribedChunk[] = []
  let c = Atomics.add(cursor, 0, 1)
  // claimed (or found none left): the stage's thread waits for this worker's answer
  Atomics.store(cursor, slot, 1)
  Atomics.notify(cursor, slot)
  for (; c < chunks; c = Atomics.add(cursor, 0, 1)) {
    const result = describeSkills(inputs.slice(c * chunk, (c + 1) * chunk), config, lastMonth)
    kept.set(c, result.described)
    described.push({ index: c, pValues: familyPValues(result.described), failures: result.failures })
  }
  port.postMessage({ chunks: described })
  return kept
}

/** Second half: decides the kept skills with their adjusted p-values; one message per chunk, then the end. */
function finish({ config }: FitStart, kept: Map<number, DescribedSkill[]>, { adjusted, previous, fittedAt }: FinishMessage): void {
  for (const [c, values] of adjusted) {
    const finished: FinishedChunk = { index: c, ...fittedRows(decideSkills(kept.get(c)!, values, config, previous), previous, fittedAt) }
    kept.delete(c)
    port.postMessage({ chunk: finished })
  }
  port.postMessage({ done: true })
}
