/**
 * @module ingest/writer
 * Stores documents in batches. Each batch — its documents, their dedupe links and signatures, the
 * source's resume cursor and the `documents.ingested` event — commits in one transaction, so a run
 * killed at any point leaves either the whole batch or none of it, and a restart resumes from the
 * last committed cursor. Rows already stored (same source and external id) are skipped, which makes
 * re-reading from an older cursor harmless.
 */
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { DocumentStore, tuneForBulkWrites, setSourceCursor } from '../db/documents.ts'
import { emit } from '../events/outbox.ts'
import { monthOf } from './dates.ts'
import { type Analysis, type DedupeLimits, Deduper } from './dedupe.ts'
import { checkDocument, type DocumentInput, ItemError, type ItemProblem } from './document.ts'
import { signatureToBytes } from './minhash.ts'
import { ensureDedupeIndex } from './reindex.ts'

export interface IngestCounts {
  /** items and rows read (good and bad) */
  read: number
  /** stored as originals */
  new: number
  /** stored as reposts (exact text or near-duplicate) plus items already stored from this source */
  duplicate: number
  /** bad items and rows, not stored */
  rejected: number
  alreadyStored: number
  exactText: number
  nearDuplicate: number
  dateEstimated: number
}

export function emptyCounts(): IngestCounts {
  return { read: 0, new: 0, duplicate: 0, rejected: 0, alreadyStored: 0, exactText: 0, nearDuplicate: 0, dateEstimated: 0 }
}

export function addCounts(a: IngestCounts, b: IngestCounts): IngestCounts {
  const out = { ...a }
  for (const k of Object.keys(out) as (keyof IngestCounts)[]) out[k] += b[k]
  return out
}

/** How many problems a run keeps in its details (the counts are always complete). */
export const MAX_PROBLEMS_KEPT = 100

interface Pending {
  doc: DocumentInput
  where: { file: string; line?: number }
  /** computed ahead (by a parse worker), else computed at flush */
  analysis?: Analysis
}

export class BatchWriter {
  readonly counts = emptyCounts()
  readonly problems: ItemProblem[] = []
  problemCount = 0
  private pending: Pending[] = []
  private cursor: string | null | undefined = undefined
  private readonly deduper: Deduper
  private readonly store: DocumentStore
  private readonly batchSize: number
  private readonly maxTextChars: number

  constructor(
    private readonly db: Db,
    config: Config,
    private readonly sourceId: string,
    private readonly runId: number | null,
    private readonly onProgress: (counts: IngestCounts) => void = () => {},
    limits: DedupeLimits = {},
  ) {
    ensureDedupeIndex(db, config.ingest.dedupe)
    tuneForBulkWrites(db, 64 * 1024)
    this.store = new DocumentStore(db, config.ingest.dedupe.bands)
    this.deduper = new Deduper(this.store, config.ingest.dedupe, limits)
    this.batchSize = config.ingest.batchSize
    this.maxTextChars = config.ingest.maxTextChars
  }

  /** Records a problem; `warning` ones are caveats on stored items and not counted as rejected. */
  problem(p: ItemProblem): void {
    this.problemCount++
    if (this.problems.length < MAX_PROBLEMS_KEPT) this.problems.push(p)
    if (!p.warning) {
      this.counts.read++
      this.counts.rejected++
    }
  }

  /** Queues a document; the batch commits when full. `cursor` is the resume point after this item. */
  add(doc: DocumentInput, where: { file: string; line?: number }, cursor?: string | null, analysis?: Analysis): void {
    try {
      checkDocument(doc, this.maxTextChars)
    } catch (err) {
      if (!(err instanceof ItemError)) throw err
      this.problem({ ...where, item: doc.externalId.slice(0, 200), field: err.field, reason: err.message })
      if (cursor !== undefined) this.cursor = cursor
      return
    }
    this.pending.push({ doc, where, analysis })
    if (cursor !== undefined) this.cursor = cursor
    if (this.pending.length >= this.batchSize) this.flush()
  }

  /** Moves the resume point without a document (e.g. past a bad line). */
  advance(cursor: string | null): void {
    this.cursor = cursor
  }

  /**
   * Commits the queued documents, the cursor and the event in one transaction.
   * @param finalStep more work for the same transaction (e.g. storing the feed's ETag)
   */
  flush(finalStep?: () => void): void {
    this.commit(finalStep, false)
  }

  /**
   * Commits what is queued and writes every band row still held in memory (dedupe.ts writes them in
   * large sorted runs, not with every batch). Call once at the end of a run; a run that ends
   * without it (killed, say) loses nothing: the next writer rebuilds the rows from the signatures.
   */
  finish(finalStep?: () => void): void {
    this.commit(finalStep, true)
  }

  private commit(finalStep: (() => void) | undefined, endOfRun: boolean): void {
    const batch = this.pending
    const cursor = this.cursor
    if (batch.length === 0 && cursor === undefined && !finalStep && !(endOfRun && this.deduper.hasPendingBands)) return
    const delta = emptyCounts()
    const stored: number[] = []
    let from: string | null = null
    let to: string | null = null
    let firstId: number | null = null
    let lastId: number | null = null
    const tx = this.db.transaction(() => {
      // documents stored before this batch are skipped unanalysed; the others' analyses come first
      // (unless the parse worker made them), so that the deduper reads what is stored for the
      // whole batch in key order (dedupe.ts prefetch)
      const analyses = batch.map(({ doc, analysis }) => (this.store.existing(this.sourceId, doc.externalId) !== undefined ? null : (analysis ?? this.deduper.analyse(doc))))
      this.deduper.beginBatch(analyses)
      // external ids this batch has stored (the transaction holds the write lock: nobody else stores)
      const storedHere = new Set<string>()
      for (const [i, { doc }] of batch.entries()) {
        delta.read++
        const a = analyses[i]
        if (!a || storedHere.has(doc.externalId)) {
          // same source and external id: stored by an earlier run (or earlier in this one)
          delta.alreadyStored++
          delta.duplicate++
          continue
        }
        const d = this.deduper.decide(a, doc.kind)
        const id = this.store.insertDocument({
          source_id: this.sourceId,
          external_id: doc.externalId,
          kind: doc.kind,
          title: doc.title,
          body: doc.body,
          posted_at: doc.postedAt,
          month: monthOf(doc.postedAt),
          date_estimated: doc.dateEstimated ? 1 : 0,
          text_hash: a.textHash,
          duplicate_of: d.duplicateOf,
          dup_similarity: d.similarity,
          occupation: doc.occupation ?? null,
          organisation: doc.organisation ?? null,
          location: doc.location ?? null,
          channel: doc.channel ?? null,
          team: doc.team ?? null,
          skills_json: doc.skills && doc.skills.length ? JSON.stringify(doc.skills) : null,
          // an exact-text repost keeps no signature of its own: it equals its original's
          signature: a.signature && d.how !== 'exact' ? signatureToBytes(a.signature) : null,
        })!
        this.deduper.stored(id, a, d)
        storedHere.add(doc.externalId)
        stored.push(id)
        firstId ??= id
        lastId = id
        if (d.duplicateOf === null) delta.new++
        else {
          delta.duplicate++
          if (d.how === 'exact') delta.exactText++
          else delta.nearDuplicate++
        }
        if (doc.dateEstimated) delta.dateEstimated++
        if (from === null || doc.postedAt < from) from = doc.postedAt
        if (to === null || doc.postedAt > to) to = doc.postedAt
      }
      this.deduper.flushBands(endOfRun)
      if (cursor !== undefined) setSourceCursor(this.db, this.sourceId, cursor)
      finalStep?.()
      if (stored.length > 0) {
        emit(this.db, 'documents.ingested', {
          source: this.sourceId,
          runId: this.runId,
          read: delta.read,
          new: delta.new,
          duplicate: delta.duplicate,
          firstId,
          lastId,
          from,
          to,
        })
      }
    })
    try {
      tx.immediate()
    } catch (err) {
      this.deduper.forget()
      throw err
    }
    this.deduper.committed()
    this.pending = []
    this.cursor = undefined
    const total = addCounts(this.counts, delta)
    Object.assign(this.counts, total)
    this.onProgress(this.counts)
  }
}
