/**
 * @module taxonomy/stage
 * The `map` stage: maps every original document not yet mapped against the stored taxonomy
 * (loading the configured or shipped one on first use), writes its mentions (via `text` or
 * `skills`; the broader concepts of their roll-up are counted, not stored) and emits
 * `documents.mapped` in the transaction of the last batch. It runs on `documents.ingested` and on `taxonomy.changed`,
 * whose writer has already marked the affected documents unmapped. Large runs are spread over
 * worker threads. Afterwards it recomputes the candidate terms.
 */
import type { Db } from '../db/connection.ts'
import {
  candidatesComputed,
  candidatesOwed,
  countMappedCounted,
  countUnmapped,
  dropMentionConceptIndex,
  ensureMentionConceptIndex,
  dismissedTerms,
  iterateDocumentTexts,
  latestOriginalMonth,
  markCandidatesOwed,
  markCandidatesComputed,
  replaceOpenCandidates,
  saveMappings,
  settleCandidates,
  storedRules,
  taxonomyVersion,
  unmappedAfter,
  unmappedBatchEnd,
} from '../db/taxonomy.ts'
import { emit } from '../events/outbox.ts'
import type { Stage, StageContext, StageResult } from '../stage.ts'
import type { Config } from '../config.ts'
import { findCandidateTerms, type CandidateResult } from './candidates.ts'
import type { Matcher } from './matcher.ts'
import { documentInput, storedRows, type MentionRow } from './rows.ts'
import { candidatesInBackground, MapperPool, mapperSource, type BackgroundCandidates, type MapperSource } from './parallel.ts'
import { defaultThreads } from '../util/ts-worker.ts'
import { ensureTaxonomy, matcherFromDb, packedMatcherFromDb } from './store.ts'

const BATCH = 1000
/**
 * Documents written per transaction (several batches), and the page cache during a map (negative:
 * KiB). Measured on the N = 100,000 benchmark database, mapping 10,000 new postings (2 cores, three
 * runs each): one transaction per 1,000 documents with the default 2 MiB cache 10.4 s CPU; per
 * 10,000 documents 9.5 s; per 10,000 with a 128 MiB cache 8.0 s (+90 MiB RSS), with 256 MiB no better.
 */
const GROUP_DOCS = 10_000
const MAP_CACHE_KIB = -131_072

/** The taxonomy changed (another process imported or edited it) while a map run was writing. */
export class TaxonomyChangedError extends Error {
  constructor(from: number, to: number) {
    super(`map: the taxonomy changed during this run (version ${from} -> ${to}); stopped before writing more mentions: run the map again to map against the new taxonomy`)
    this.name = 'TaxonomyChangedError'
  }
}

/**
 * What a worker thread needs to rebuild the stored taxonomy's matcher and, for a database file, to
 * read the documents' texts itself (an in-memory database's texts are sent to it).
 */
function storedMapperSource(db: Db): MapperSource {
  const rules = storedRules(db)
  // the taxonomy the bytes hold (restoring them costs less than reading and validating it again)
  const { matcher, bytes } = packedMatcherFromDb(db)
  return mapperSource(matcher.taxonomy, rules?.text ?? null, rules?.file ?? '(none)', db.memory ? undefined : db.name, bytes)
}

export interface MapRunCounts {
  mapped: number
  mentions: number
  rollups: number
  workers: number
}

/**
 * Maps every unmapped original document (see module doc).
 * @param threads worker threads to use when at least `threshold` documents wait (0: a default)
 * @param bulkMin the fewest waiting documents that make a bulk map (default `taxonomy.bulkMapMin`)
 * @param batch documents per batch (a worker's unit), groupDocs per write transaction (for tests)
 * @param source the workers' taxonomy and database file when the caller has built it, with the
 *   taxonomy version read before it was built (the version the mentions are checked against)
 *
 * A bulk map (at least `bulkMin` documents wait and they outnumber those already counted) drops the
 * mentions-by-concept index for the run and builds it once at its end. Measured on the N = 100,000
 * benchmark (2 cores): inserting into the index costs about 3.5 s per 10,000 documents once 100,000
 * are mapped, the rebuild 2.1 s for all 110,000; so an increment of a tenth keeps the index, and a
 * first import or a re-map after a taxonomy change drops it.
 */
export async function mapUnmapped(
  db: Db,
  config: Config,
  log: (m: string) => void = () => {},
  opts: { threads?: number; threshold?: number; bulkMin?: number; batch?: number; groupDocs?: number; source?: { source: MapperSource; version: number } } = {},
): Promise<MapRunCounts> {
  const total = countUnmapped(db)
  const counts: MapRunCounts = { mapped: 0, mentions: 0, rollups: 0, workers: 0 }
  const bulk = total >= (opts.bulkMin ?? config.taxonomy.bulkMapMin) && total >= countMappedCounted(db)
  if (bulk) {
    dropMentionConceptIndex(db)
    log(`map: bulk map of ${total} documents: the mentions-by-concept index is built once at the end`)
  } else if (ensureMentionConceptIndex(db)) log('map: rebuilt the mentions-by-concept index (an earlier bulk map was stopped)')
  if (total === 0) return counts
  // a page cache that holds a group's touched pages until its commit (restored afterwards: a
  // long-running `tides serve` does not keep it)
  const cacheBefore = db.pragma('cache_size', { simple: true }) as number
  db.pragma(`cache_size = ${MAP_CACHE_KIB}`)
  // The mention rows' foreign keys are checked here instead of by SQLite: every document is read
  // inside the transaction that writes its mentions (saveMappings refuses one that is gone) and
  // every concept comes from the taxonomy of this run's version, checked in each transaction.
  // SQLite's two parent lookups per row took half of the insert time (522,429 rows of the N =
  // 100,000 benchmark: 1.34-1.42 s CPU with them, 0.79-0.81 s without). Restored afterwards; a
  // no-op inside a caller's transaction (the checks then stay on).
  const foreignKeysBefore = db.pragma('foreign_keys', { simple: true }) as number
  db.pragma('foreign_keys = OFF')
  const batchDocs = opts.batch ?? BATCH
  const groupDocs = opts.groupDocs ?? GROUP_DOCS
  let pool: MapperPool | undefined
  try {
    const version = opts.source?.version ?? taxonomyVersion(db)
    const threshold = opts.threshold ?? config.taxonomy.workerThreshold
    const threads = opts.threads ?? (config.taxonomy.workers || defaultThreads())
    let matcher: Matcher | undefined
    if (total >= threshold && threads > 1) {
      pool = await MapperPool.start(opts.source?.source ?? storedMapperSource(db), threads)
      counts.workers = pool.size
      log(`map: ${total} documents over ${pool.size} worker threads`)
    } else matcher = matcherFromDb(db)
    let after = 0
    // with workers, read ahead so that every worker has batches while the main thread writes a
    // group (two groups' worth beyond what is being written: when the workers read the texts, a
    // batch waiting costs the main thread only its id range)
    const ahead = pool ? pool.size + (pool.readsStore ? 2 : 1) * Math.ceil(groupDocs / batchDocs) : 1
    const inflight: Promise<{ ids: number[]; rows: MentionRow[][] }>[] = []
    // a batch that fails while an earlier one is awaited fails the run when its turn comes, not
    // as an unhandled rejection before the cleanup below
    const track = (p: Promise<{ ids: number[]; rows: MentionRow[][] }>) => { p.catch(() => {}); inflight.push(p) }
    const fetchNext = (): boolean => {
      if (pool?.readsStore) {
        const last = unmappedBatchEnd(db, after, batchDocs)
        if (last === undefined) return false
        track(pool.mapStored(after + 1, last))
        after = last
        return true
      }
      const docs = unmappedAfter(db, after, batchDocs)
      if (docs.length === 0) return false
      after = docs[docs.length - 1]!.id
      const inputs = docs.map(documentInput)
      const ids = docs.map((d) => d.id)
      track(pool ? pool.mapRows(inputs).then((rows) => ({ ids, rows })) : Promise.resolve({ ids, rows: inputs.map((i) => storedRows(matcher!, i)) }))
      return true
    }
    while (inflight.length < ahead && fetchNext());
    // finished batches are written together, up to groupDocs documents per transaction: each
    // commit writes every page the transaction touched (the by-concept index's pages are spread
    // thin), so fewer, larger commits write each page fewer times
    let ready: { ids: number[]; rows: MentionRow[][] }[] = []
    let readyDocs = 0
    while (inflight.length > 0) {
      const batch = await inflight.shift()!
      ready.push(batch)
      readyDocs += batch.ids.length
      while (inflight.length < ahead && fetchNext());
      if (readyDocs < groupDocs && inflight.length > 0) continue
      const group = ready
      ready = []
      readyDocs = 0
      db.transaction(() => {
        const now = taxonomyVersion(db)
        if (now !== version) throw new TaxonomyChangedError(version, now)
        // mentions and the demand aggregates they feed, in one transaction per group
        markCandidatesOwed(db)
        for (const { ids, rows: perDoc } of group) {
          counts.rollups += saveMappings(db, ids.map((id, i) => ({ id, rows: perDoc[i]! })))
          for (const rows of perDoc) counts.mentions += rows.length
          counts.mapped += ids.length
        }
        if (counts.mapped >= total || inflight.length === 0) emit(db, 'documents.mapped', { mapped: counts.mapped, version, mentions: counts.mentions, rollups: counts.rollups })
      })()
      log(`map: ${counts.mapped}/${total}`)
    }
  } finally {
    await pool?.close()
    db.pragma(`cache_size = ${cacheBefore}`)
    db.pragma(`foreign_keys = ${foreignKeysBefore ? 'ON' : 'OFF'}`)
    // also after a failed batch: readers (dashboard pages, taxonomy decisions) look mentions up by concept
    if (bulk && ensureMentionConceptIndex(db)) log('map: built the mentions-by-concept index')
  }
  return counts
}

const YEAR_MONTH = /^\d{4}-(0[1-9]|1[0-2])$/

/** The first month of the candidate window ending at `latest` (as findCandidateTerms computes it). */
export function candidateWindowStart(latest: string, recentMonths: number, windowMonths: number): string {
  const index = Number(latest.slice(0, 4)) * 12 + Number(latest.slice(5, 7)) - 1 - Math.max(windowMonths, recentMonths + 1) + 1
  return `${Math.floor(index / 12)}-${String((index % 12) + 1).padStart(2, '0')}`
}

/**
 * Finds the candidate terms of the candidate window from the original documents (reads only: the
 * latest month and the window before it are found through the (kind, month) index; documents of
 * earlier months never take part, so they are not read). Also run in a worker thread with its own
 * read-only connection (candidate-worker.ts) while the map runs.
 */
export function computeCandidates(db: Db, config: Config, matcher: Matcher): CandidateResult {
  const c = config.taxonomy.candidates
  const latest = latestOriginalMonth(db)
  // a malformed latest month: the discovery decides over every document, as before
  const since = latest !== null && YEAR_MONTH.test(latest) ? candidateWindowStart(latest, c.recentMonths, c.windowMonths) : undefined
  return findCandidateTerms(
    () => (function* () {
      for (const d of iterateDocumentTexts(db, since)) yield { month: d.month, text: d.title ? `${d.title}\n${d.body}` : d.body }
    })(),
    matcher,
    {
      recentMonths: c.recentMonths,
      windowMonths: c.windowMonths,
      ...(latest !== null ? { latestMonth: latest } : {}),
      minRecentDocs: c.minRecentDocs,
      minRatio: c.minRatio,
      alpha: c.alpha,
      maxTerms: c.maxTerms,
      exclude: dismissedTerms(db),
    },
  )
}

/** Stores a computed candidate list as the open candidates and records when it was computed. */
export function storeCandidates(db: Db, result: CandidateResult, now: Date = new Date()): void {
  db.transaction(() => {
    replaceOpenCandidates(
      db,
      result.candidates.map((t) => ({
        term: t.term,
        score: t.score,
        recentDf: t.recentDf,
        earlierDf: t.earlierDf,
        trend: t.trend,
        examples: t.examples,
      })),
    )
    markCandidatesComputed(db, now.toISOString())
  })()
}

/** Recomputes and stores the open candidate terms (computeCandidates, then storeCandidates). */
export function refreshCandidates(db: Db, config: Config, matcher: Matcher = matcherFromDb(db), now: Date = new Date()): CandidateResult {
  const result = computeCandidates(db, config, matcher)
  storeCandidates(db, result, now)
  return result
}

/**
 * Whether a map run recomputes the candidate list: when it was never computed, the taxonomy
 * changed since (an accepted term or a new taxonomy), or `refreshHours` have passed. Candidate
 * discovery re-tokenises the whole window (about half of an incremental map at N = 100,000), and
 * the list is a review aid: a list a few hours old misses at most the last hours' documents.
 */
export function candidatesDue(db: Db, config: Config, now: Date = new Date()): { due: boolean; computedAt: string | null } {
  const last = candidatesComputed(db)
  if (!last) return { due: true, computedAt: null }
  const hours = config.taxonomy.candidates.refreshHours
  const age = now.getTime() - Date.parse(last.at)
  const due = hours === 0 || !(age >= 0) || age >= hours * 3_600_000 || last.taxonomyVersion !== taxonomyVersion(db)
  return { due, computedAt: last.at }
}

async function run(ctx: StageContext): Promise<StageResult> {
  const { db, config } = ctx
  const loaded = await ensureTaxonomy(db, config, ctx.log)
  // A candidate list that is due is computed while the documents are mapped: it reads only the
  // documents' texts, which mapping does not change, and uses a core the map leaves idle at times
  // (in a worker thread, for a database file and a map large enough for worker threads).
  let background: BackgroundCandidates | undefined
  let source: MapperSource | undefined
  const version = taxonomyVersion(db)
  if (config.taxonomy.candidates.enabled && !db.memory && candidatesDue(db, config).due) {
    const waiting = countUnmapped(db)
    if (waiting >= config.taxonomy.workerThreshold) {
      // the same taxonomy source serves the map's worker threads
      source = storedMapperSource(db)
      background = candidatesInBackground(source, config)
    }
  }
  let counts: MapRunCounts
  try {
    counts = await mapUnmapped(db, config, ctx.log, source ? { source: { source, version } } : {})
  } catch (err) {
    await background?.stop()
    throw err
  }
  let candidates = -1
  let kept = ''
  // also when this run mapped nothing but an earlier one was stopped before deciding
  if (counts.mapped > 0 || candidatesOwed(db)) {
    if (config.taxonomy.candidates.enabled) {
      const due = candidatesDue(db, config)
      if (due.due) {
        // the background list counts only when the taxonomy it was computed with is still current;
        // a failed worker leaves the work to this thread
        const early =
          background && taxonomyVersion(db) === version
            ? await background.result.catch((err: Error) => void ctx.log(`map: ${err.message}; computing the candidate terms here`))
            : undefined
        const result = early ?? computeCandidates(db, config, matcherFromDb(db))
        storeCandidates(db, result)
        candidates = result.candidates.length
      } else kept = `; candidate terms kept from ${due.computedAt} (recomputed every ${config.taxonomy.candidates.refreshHours} h or after a taxonomy change)`
    }
    settleCandidates(db)
  }
  await background?.stop()
  const afterChange = ctx.trigger.includes('taxonomy.changed')
  // a change that touched no stored document still changes the taxonomy (a new concept needs its
  // curve), and the dashboard follows the change to its refit: announce the map done all the same
  if (afterChange && counts.mapped === 0) db.transaction(() => emit(db, 'documents.mapped', { mapped: 0, version, mentions: 0, rollups: 0 }))()
  const after = afterChange ? ' after a taxonomy change' : ''
  const summary =
    `mapped ${counts.mapped} documents${after} (${counts.mentions} mentions, ${counts.rollups} rollups` +
    `${counts.workers ? `, ${counts.workers} worker threads` : ''})` +
    `${loaded ? `; loaded ${loaded.concepts} concepts` : ''}${candidates >= 0 ? `; ${candidates} candidate terms` : kept}`
  return {
    summary,
    counts: { mapped: counts.mapped, mentions: counts.mentions, rollups: counts.rollups, candidates: Math.max(0, candidates), candidatesRecomputed: candidates >= 0 ? 1 : 0, ...(loaded ? { concepts: loaded.concepts } : {}) },
  }
}

export const mapStage: Stage = {
  name: 'map',
  description: 'map documents to skills (mentions with broader rollups) and find rising candidate terms',
  subscribesTo: ['documents.ingested', 'taxonomy.changed'],
  run,
}
