/**
 * @module taxonomy/parallel
 * Mapping spread over worker threads, for large imports. Each worker builds the matcher once
 * (from the concepts, rule text and lexicon answers it is sent, so no worker re-reads files) and
 * maps the batches it is given; batches go to whichever worker is free.
 */
import type { Worker } from 'node:worker_threads'
import type { Config } from '../config.ts'
import type { CandidateResult } from './candidates.ts'
import { commonWordsFor } from './matcher-build.ts'
import { Matcher, type MapInput } from './matcher.ts'
import { unpackMatcher } from './matcher-cache.ts'
import { emptyRules, parseRules } from './rules.ts'
import { decodeRows, type MentionRow } from './rows.ts'
import type { Concept, Taxonomy } from './types.ts'
import { defaultThreads, startTsWorker } from '../util/ts-worker.ts'

export interface MapperSource {
  concepts: Concept[]
  rulesText: string | null
  rulesFile: string
  /** the lexicon's answers for the taxonomy's one-word labels (see commonWordsFor); not needed with `packed` */
  commonWords: string[]
  /** the compiled matcher (matcher-cache.ts packMatcher): a worker restores it instead of compiling */
  packed?: Uint8Array
  /** the database file, when workers read the documents' texts themselves (not for an in-memory database) */
  dbFile?: string
}

export interface WorkerRequest {
  id: number
  /** the documents to map, sent */
  inputs?: MapInput[]
  /** or: the unmapped original documents with ids first..last, read by the worker from dbFile */
  stored?: { first: number; last: number }
}

export interface WorkerResponse {
  id: number
  /** the batch's mention rows (see rows.ts encodeRows) */
  rows?: Int32Array
  /** the ids of the documents read (with `stored`) */
  ids?: Float64Array
  error?: string
}

/**
 * Builds the message that lets a worker rebuild the same matcher (and, with `dbFile`, read the
 * documents). With `packed` (the compiled matcher of this taxonomy and these rules) workers restore
 * it instead of compiling it.
 */
export function mapperSource(taxonomy: Taxonomy, rulesText: string | null, rulesFile: string, dbFile?: string, packed?: Uint8Array): MapperSource {
  return {
    concepts: taxonomy.concepts,
    rulesText,
    rulesFile,
    commonWords: packed ? [] : [...commonWordsFor(taxonomy)],
    ...(dbFile ? { dbFile } : {}),
    ...(packed ? { packed } : {}),
  }
}

/** The matcher a worker builds from a MapperSource (the same as matcherFromDb's for that taxonomy and rules). */
export function matcherFromSource(source: MapperSource): Matcher {
  if (source.packed) {
    // the pool decodes rows by the position of source.concepts: the restored matcher must agree
    const restored = unpackMatcher(source.packed)
    const concepts = restored.taxonomy.concepts
    if (concepts.length === source.concepts.length && concepts.every((c, i) => c.id === source.concepts[i]!.id)) return restored
  }
  const taxonomy: Taxonomy = { concepts: source.concepts, byId: new Map(source.concepts.map((c) => [c.id, c])) }
  const rules = source.rulesText ? parseRules(source.rulesText, source.rulesFile) : emptyRules()
  // a source with packed bytes carries no lexicon answers: asked here when the bytes did not serve
  return Matcher.build(taxonomy, rules, { commonWords: source.packed ? commonWordsFor(taxonomy) : new Set(source.commonWords) })
}

export interface BackgroundCandidates {
  /** the candidate list, computed from the database file */
  result: Promise<CandidateResult>
  /** stops the thread (at once when its result is not wanted) */
  stop(): Promise<void>
}

/** Candidate terms computed in a worker thread with its own read-only connection to `source.dbFile` (see candidate-worker.ts). */
export function candidatesInBackground(source: MapperSource, config: Config): BackgroundCandidates {
  const worker = startTsWorker(new URL('./candidate-worker.ts', import.meta.url), { source, config } satisfies CandidateWorkerData)
  const result = new Promise<CandidateResult>((resolve, reject) => {
    worker.once('message', (msg: { result?: CandidateResult; error?: string }) => {
      if (msg.error !== undefined || !msg.result) reject(new Error(`candidate terms worker: ${msg.error ?? 'no result'}`))
      else resolve(msg.result)
    })
    worker.once('error', reject)
    worker.once('exit', (code) => reject(new Error(`candidate terms worker stopped (exit code ${code}) before its result`)))
  })
  // not awaited when the run fails or the list is not wanted after all
  result.catch(() => {})
  return { result, stop: async () => { await worker.terminate() } }
}

export interface CandidateWorkerData {
  source: MapperSource
  config: Config
}

interface Slot {
  worker: Worker
  ready: Promise<void>
  busy: boolean
}

export class MapperPool {
  private readonly slots: Slot[] = []
  private readonly waiting = new Map<number, { resolve: (r: WorkerResponse) => void; reject: (e: Error) => void; slot: Slot }>()
  private readonly queue: { req: WorkerRequest; resolve: (r: WorkerResponse) => void; reject: (e: Error) => void }[] = []
  private readonly conceptIds: string[]
  /** whether the workers read the documents from the database themselves (mapStored) */
  readonly readsStore: boolean
  private nextId = 0

  private constructor(source: MapperSource, threads: number) {
    this.conceptIds = source.concepts.map((c) => c.id)
    this.readsStore = source.dbFile !== undefined
    for (let i = 0; i < threads; i++) {
      const worker = startTsWorker(new URL('./map-worker.ts', import.meta.url), source)
      const slot: Slot = { worker, busy: true, ready: Promise.resolve() }
      slot.ready = new Promise<void>((resolve, reject) => {
        const onFirst = (msg: WorkerResponse) => {
          if (msg.id === -1) {
            worker.off('message', onFirst)
            slot.busy = false
            resolve()
            this.pump()
          }
        }
        worker.on('message', onFirst)
        worker.once('error', reject)
      })
      worker.on('message', (msg: WorkerResponse) => {
        if (msg.id < 0) return
        const w = this.waiting.get(msg.id)
        if (!w) return
        this.waiting.delete(msg.id)
        w.slot.busy = false
        if (msg.error !== undefined) w.reject(new Error(`mapping worker: ${msg.error}`))
        else w.resolve(msg)
        this.pump()
      })
      worker.on('error', (err) => {
        for (const [id, w] of this.waiting) if (w.slot === slot) { this.waiting.delete(id); w.reject(err) }
      })
      this.slots.push(slot)
    }
  }

  /** Starts `threads` workers and waits until each has built its matcher. */
  static async start(source: MapperSource, threads = defaultThreads()): Promise<MapperPool> {
    const pool = new MapperPool(source, Math.max(1, threads))
    await Promise.all(pool.slots.map((s) => s.ready))
    return pool
  }

  get size(): number {
    return this.slots.length
  }

  /** Maps one batch on the next free worker; resolves to each document's mention rows. */
  async mapRows(inputs: MapInput[]): Promise<MentionRow[][]> {
    const res = await this.request({ id: this.nextId++, inputs })
    return decodeRows(res.rows ?? new Int32Array(1), this.conceptIds)
  }

  /**
   * Maps the unmapped original documents with ids from `first` to `last`, read by the worker (the
   * pool must have been started with `dbFile`); resolves to their ids and mention rows.
   */
  async mapStored(first: number, last: number): Promise<{ ids: number[]; rows: MentionRow[][] }> {
    if (!this.readsStore) throw new Error('mapStored: this pool was started without a database file')
    const res = await this.request({ id: this.nextId++, stored: { first, last } })
    return { ids: [...(res.ids ?? [])], rows: decodeRows(res.rows ?? new Int32Array(1), this.conceptIds) }
  }

  private request(req: WorkerRequest): Promise<WorkerResponse> {
    return new Promise((resolve, reject) => {
      this.queue.push({ req, resolve, reject })
      this.pump()
    })
  }

  private pump(): void {
    for (const slot of this.slots) {
      if (slot.busy || this.queue.length === 0) continue
      const job = this.queue.shift()!
      slot.busy = true
      this.waiting.set(job.req.id, { resolve: job.resolve, reject: job.reject, slot })
      slot.worker.postMessage(job.req)
    }
  }

  /** Stops every worker. */
  async close(): Promise<void> {
    await Promise.all(this.slots.map((s) => s.worker.terminate()))
  }
}
