/**
 * @module curves/fit-threads
 * The fit of every skill, spread over worker threads when there is enough of it, with the same
 * result as {@link fitAll} on one thread (test/curves/fit-threads.test.ts).
 *
 * A skill's analysis does not depend on the other skills; only the Benjamini–Hochberg adjustment
 * needs every p-value. So the run goes in two halves:
 * 1. the skills, in chunks of consecutive inputs, are analysed and described by whichever thread
 *    claims the next chunk (a shared atomic counter: a worker still starting simply claims fewer);
 *    each thread keeps its described skills and the stage's thread gets their p-values;
 * 2. the stage's thread adjusts all p-values together, in input order, and hands each thread the
 *    adjusted values of its chunks; each thread decides its skills and builds their rows and
 *    state-change events (the details JSON, most of the bytes, is made where the skill is).
 * A worker that fails to start or dies leaves its chunks to the stage's thread (logged): the
 * analysis is deterministic, so they come out the same.
 */
import type { Worker } from 'node:worker_threads'
import { benjaminiHochberg } from '../stats/benjamini-hochberg.ts'
import { startWorker } from '../util/worker.ts'
import type { CurvesConfig } from './config.ts'
import { decideSkills, describeSkills, familyPValues, fitAll, windowEnd, type FitAllResult } from './fit-all.ts'
import type { DescribedSkill } from './fit-skill.ts'
import { fittedRows, type FittedRows } from './rows.ts'
import type { SkillSeriesInput } from './series.ts'

export interface FitRowsResult extends FittedRows {
  failures: FitAllResult['failures']
  /** number of p-values in the BH family */
  tested: number
  /** threads that fitted skills (1: the stage's thread alone) */
  threads: number
}

export interface FitThreadsOptions {
  /** threads in all, the stage's own included (default 1: no worker) */
  threads?: number
  /**
   * fewest skills with enough mentions for a full analysis (config.minMentions over the whole
   * series) before workers are started (default 2,500: a worker's start, about 0.4 s of tsx
   * loading on this project's 2-core benchmark machine, costs about as much as fitting 1,200 such
   * skills on one thread, so below about twice that the second thread gains nothing)
   */
  minSkills?: number
  /** skills per chunk (default 200) */
  chunk?: number
  /**
   * the stage's thread waits (up to 30 s) until every worker has made its first claim before it
   * claims itself: tests use it so that the workers surely take part
   */
  workersFirst?: boolean
  /** workers already started (the caller stops them); else they are started here and stopped after */
  pool?: FitThreads
  log?: (message: string) => void
}

/** See {@link FitThreadsOptions.minSkills}. */
export const MIN_SKILLS_FOR_THREADS = 2500
const CHUNK = 200

/** What a fit worker is started with (fit-worker.ts): it then waits for a {@link FitStart}. */
export interface FitWorkerData {
  /**
   * Int32Array over a SharedArrayBuffer: [0] the next chunk to claim, [slot] set to 1 by the worker
   * once it has made its first claim (a worker that has not when every chunk is taken is not waited
   * for: a chunk it claimed meanwhile is analysed again on the stage's thread)
   */
  cursor: SharedArrayBuffer
  slot: number
}

/** The message that starts a worker's first half. */
export interface FitStart {
  inputs: readonly SkillSeriesInput[]
  config: CurvesConfig
  lastMonth: number | undefined
  chunk: number
}

/** A chunk's first half, as a worker reports it. */
export interface DescribedChunk {
  index: number
  pValues: number[]
  failures: FitAllResult['failures']
}

/** A chunk's second half, as a worker reports it (one message each, `{ chunk }`, then `{ done: true }`). */
export interface FinishedChunk extends FittedRows {
  index: number
}

/** The message that starts a worker's second half: adjusted p-values per chunk it described. */
export interface FinishMessage {
  adjusted: Map<number, Float64Array>
  previous: ReadonlyMap<string, string>
  fittedAt: string
}

/**
 * Worker threads for the fit, started before the stage reads its inputs so that they load while it
 * does; {@link fitToRows} uses them when the run is large enough.
 */
export class FitThreads {
  /** the first failure of each worker (its error event, or its exit), else null */
  private readonly failed: (Error | null)[]

  private constructor(
    readonly workers: Worker[],
    readonly cursor: Int32Array,
  ) {
    this.failed = workers.map(() => null)
    workers.forEach((worker, w) => {
      worker.on('error', (error) => (this.failed[w] ??= error))
      worker.on('exit', (code) => (this.failed[w] ??= new Error(`stopped with exit code ${code}`)))
    })
  }

  /** `threads` in all, this one included: starts threads - 1 workers. */
  static start(threads: number, workerModule = new URL('./fit-worker.ts', import.meta.url)): FitThreads {
    const buffer = new SharedArrayBuffer(4 * Math.max(1, threads))
    const workers: Worker[] = []
    for (let slot = 1; slot < threads; slot++) workers.push(startWorker(workerModule, { cursor: buffer, slot } satisfies FitWorkerData))
    return new FitThreads(workers, new Int32Array(buffer))
  }

  /** The worker's failure so far, if any. */
  failure(w: number): Error | null {
    return this.failed[w] ?? null
  }

  async stop(): Promise<void> {
    await Promise.all(this.workers.map((worker) => worker.terminate()))
  }
}

/** Skills of the run with enough mentions in all for a full analysis: the measure of the fit's work. */
export function fullAnalyses(inputs: readonly SkillSeriesInput[], config: CurvesConfig): number {
  let n = 0
  for (const input of inputs) {
    let mentions = 0
    for (const series of [input.external, input.internal]) if (series) for (const x of series.n) mentions += x
    if (mentions >= config.minMentions) n++
  }
  return n
}

/**
 * Fits every skill and builds the rows and events to store, on `threads` threads when the run has
 * enough skills to analyse fully (see {@link FitThreadsOptions.minSkills}), else on this one.
 *
 * @example
 * ```ts
 * const { rows, events } = await fitToRows(inputs, config.curves, previousStates, new Date().toISOString(), { threads: 2 })
 * ```
 */
export async function fitToRows(
  inputs: readonly SkillSeriesInput[],
  config: CurvesConfig,
  previous: ReadonlyMap<string, string>,
  fittedAt: string,
  options: FitThreadsOptions = {},
): Promise<FitRowsResult> {
  const threads = options.pool ? options.pool.workers.length + 1 : Math.max(1, Math.floor(options.threads ?? 1))
  if (threads === 1 || inputs.length === 0 || fullAnalyses(inputs, config) < (options.minSkills ?? MIN_SKILLS_FOR_THREADS)) {
    const result = fitAll(inputs, config, previous)
    return { ...fittedRows(result.curves, previous, fittedAt), failures: result.failures, tested: result.tested, threads: 1 }
  }
  const pool = options.pool ?? FitThreads.start(threads)
  try {
    return await fitOnThreads(inputs, config, previous, fittedAt, pool, options)
  } finally {
    if (!options.pool) await pool.stop()
  }
}

async function fitOnThreads(
  inputs: readonly SkillSeriesInput[],
  config: CurvesConfig,
  previous: ReadonlyMap<string, string>,
  fittedAt: string,
  pool: FitThreads,
  options: FitThreadsOptions,
): Promise<FitRowsResult> {
  const log = options.log ?? (() => {})
  const chunk = Math.max(1, Math.floor(options.chunk ?? CHUNK))
  const chunks = Math.ceil(inputs.length / chunk)
  const lastMonth = windowEnd(inputs)
  const { workers, cursor } = pool
  const start: FitStart = { inputs, config, lastMonth, chunk }
  Atomics.store(cursor, 0, 0)
  for (let w = 0; w < workers.length; w++) Atomics.store(cursor, w + 1, 0)
  for (const worker of workers) worker.postMessage(start)
  {
    const slice = (c: number) => inputs.slice(c * chunk, (c + 1) * chunk)
    if (options.workersFirst) {
      const deadline = Date.now() + 30_000
      for (let slot = 1; slot <= workers.length; slot++) while (Atomics.load(cursor, slot) === 0 && Date.now() < deadline) Atomics.wait(cursor, slot, 0, 50)
    }
    // first half: claim chunks until none is left
    const local = new Map<number, { described: DescribedSkill[]; failures: FitAllResult['failures'] }>()
    for (let c = Atomics.add(cursor, 0, 1); c < chunks; c = Atomics.add(cursor, 0, 1)) local.set(c, describeSkills(slice(c), config, lastMonth))
    const remote = new Map<number, { worker: number; chunk: DescribedChunk }>()
    // a worker that has made no claim yet will find nothing left: not waited for (a claim it made
    // after this look is analysed again below, as a failed worker's)
    const alive: boolean[] = workers.map((_, w) => Atomics.load(cursor, w + 1) === 1)
    await Promise.all(
      workers.map(async (worker, w) => {
        if (!alive[w]) return
        try {
          let reply: { chunks: DescribedChunk[] } | undefined
          await receive(pool, w, (message) => {
            reply = message as { chunks: DescribedChunk[] }
            return true
          })
          for (const described of reply!.chunks) remote.set(described.index, { worker: w, chunk: described })
        } catch (error) {
          alive[w] = false
          log(`fit: a worker thread failed (${messageOf(error)}); its skills are fitted on the stage's thread`)
        }
      }),
    )
    // chunks a failed worker had claimed
    for (let c = 0; c < chunks; c++) if (!local.has(c) && !remote.has(c)) local.set(c, describeSkills(slice(c), config, lastMonth))

    // the adjustment, over all p-values in input order
    const pValues: number[] = []
    const offsets: number[] = []
    const failures: FitAllResult['failures'] = []
    for (let c = 0; c < chunks; c++) {
      offsets.push(pValues.length)
      const mine = local.get(c)
      const part = mine ? familyPValues(mine.described) : remote.get(c)!.chunk.pValues
      for (const p of part) pValues.push(p)
      failures.push(...(mine ? mine.failures : remote.get(c)!.chunk.failures))
    }
    offsets.push(pValues.length)
    const adjusted = Float64Array.from(benjaminiHochberg(pValues, config.q).adjusted)
    const adjustedOf = (c: number) => adjusted.subarray(offsets[c]!, offsets[c + 1]!)

    // second half: each thread decides its own skills and builds their rows
    const finished = new Map<number, FittedRows>()
    const replies = workers.map(async (worker, w) => {
      if (!alive[w]) return
      const message: FinishMessage = { adjusted: new Map(), previous, fittedAt }
      for (const [c, r] of remote) if (r.worker === w) message.adjusted.set(c, adjustedOf(c).slice())
      worker.postMessage(message)
      try {
        // one message per chunk (no second copy of every row in one message), then the end
        await receive(pool, w, (message) => {
          const { chunk, done } = message as { chunk?: FinishedChunk; done?: boolean }
          if (chunk) finished.set(chunk.index, chunk)
          return done === true
        })
      } catch (error) {
        log(`fit: a worker thread failed (${messageOf(error)}); its skills are fitted on the stage's thread`)
      }
    })
    for (const [c, mine] of local) finished.set(c, fittedRows(decideSkills(mine.described, adjustedOf(c), config, previous), previous, fittedAt))
    await Promise.all(replies)

    const threadsUsed = 1 + workers.filter((_, w) => alive[w] && [...remote.values()].some((r) => r.worker === w)).length
    const out: FitRowsResult = { rows: [], events: [], states: {}, failures, tested: pValues.filter((p) => !Number.isNaN(p)).length, threads: threadsUsed }
    for (let c = 0; c < chunks; c++) {
      // a worker that died after describing: its chunk is analysed again here (deterministic: the same p-values)
      const part = finished.get(c) ?? fittedRows(decideSkills(describeSkills(slice(c), config, lastMonth).described, adjustedOf(c), config, previous), previous, fittedAt)
      out.rows.push(...part.rows)
      out.events.push(...part.events)
      for (const [state, n] of Object.entries(part.states)) out.states[state] = (out.states[state] ?? 0) + n
    }
    return out
  }
}

/**
 * Hands each message of the worker to `each` until it returns true; rejects on a message with an
 * `error`, on the worker's error, and on its exit before that.
 */
function receive(pool: FitThreads, w: number, each: (message: unknown) => boolean): Promise<void> {
  const worker = pool.workers[w]!
  return new Promise((resolve, reject) => {
    const failed = pool.failure(w)
    if (failed) return reject(failed)
    const done = () => {
      worker.off('message', onMessage)
      worker.off('error', onError)
      worker.off('exit', onExit)
    }
    const onMessage = (message: { error?: string }) => {
      if (typeof message === 'object' && message !== null && typeof message.error === 'string') {
        done()
        reject(new Error(message.error))
      } else if (each(message)) {
        done()
        resolve()
      }
    }
    const onError = (error: Error) => {
      done()
      reject(error)
    }
    const onExit = (code: number) => {
      done()
      reject(new Error(`stopped with exit code ${code}`))
    }
    worker.on('message', onMessage)
    worker.on('error', onError)
    worker.on('exit', onExit)
  })
}

function messageOf(error: unknown): string {
  return error instanceof Error ? error.message : String(error)
}
