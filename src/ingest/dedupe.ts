/**
 * @module ingest/dedupe
 * Deciding whether a posting is new or a repost, before it is stored:
 * 1. exact: the same words in the same order (normalised-text hash) as a stored posting, from any
 *    source; similarity 1;
 * 2. near: MinHash LSH candidates (any band key shared, see minhash.ts), verified with the exact
 *    Jaccard similarity of the two shingle sets; at or above the threshold it is a repost.
 * A repost links to the original of the posting it matched (never to another repost), so every
 * chain has one root and demand counts only `duplicate_of IS NULL`. Requests are never deduplicated
 * by text: two people asking for the same course are two signals, not a repost.
 * Decisions depend only on what is stored before, in arrival order, so a run killed and restarted
 * reaches the same decisions as one uninterrupted run.
 */
import { RECENT_BANDS_FRACTION, bandsThrough, documentsBetween, lastDocumentId, setBandsThrough, signaturesAfter, writeBandRun } from '../db/bands.ts'
import { type DocumentStore, maxDocumentId, storedBandKey } from '../db/documents.ts'
import { SketchStore } from '../db/sketches.ts'
import { type BandFilter, buildBandFilter, cachedBandFilter } from './band-filter.ts'
import type { DocumentInput } from './document.ts'
import { bandKeys, estimateJaccard, exactJaccard, minhashSignature, shingleHashes, shingleSet, signatureFromBytes, toSortedSet } from './minhash.ts'
import { PendingBands } from './pending-bands.ts'
import { normalisedTextHash } from './text.ts'

export interface DedupeParams {
  threshold: number
  numHashes: number
  bands: number
  shingleSize: number
}

export interface Analysis {
  textHash: string
  /** shingle hashes in text order (see shingleHashes); sorted into a set only when compared exactly */
  shingles: Uint32Array
  signature: Uint32Array | null
  keys: number[] | null
}

export interface Decision {
  duplicateOf: number | null
  similarity: number | null
  how: 'exact' | 'near' | null
}

/** The text that identifies a document for dedupe: title and body. */
export function dedupeText(doc: Pick<DocumentInput, 'title' | 'body'>): string {
  return `${doc.title}\n${doc.body}`
}

/** Settings that signatures and band keys depend on; stored so that a change triggers a rebuild. */
export function indexSignature(p: DedupeParams): string {
  return `minhash-oph-v2:k=${p.numHashes}:b=${p.bands}:w=${p.shingleSize}`
}

/**
 * The text hash, shingles, MinHash signature and band keys of a document: pure, so that a worker
 * thread can compute them while the main thread stores the previous batch.
 */
export function analyseDocument(doc: Pick<DocumentInput, 'title' | 'body' | 'kind'>, params: DedupeParams): Analysis {
  const { hash, tokens } = normalisedTextHash(dedupeText(doc))
  if (doc.kind !== 'posting') return { textHash: hash, shingles: new Uint32Array(0), signature: null, keys: null }
  const shingles = shingleHashes(tokens, params.shingleSize)
  if (shingles.length === 0) return { textHash: hash, shingles, signature: null, keys: null }
  const signature = minhashSignature(shingles, params.numHashes)
  return { textHash: hash, shingles, signature, keys: bandKeys(signature, params.bands) }
}

/** Postings whose signature and shingles stay in memory (about 1 KB each). */
const CACHE_SIZE = 30_000

/**
 * Bytes for the sketches of postings stored by this run (k bytes each: 64 MiB is 1,118,481
 * postings at k = 60). A sketch keeps the low 8 bits of each signature value (b-bit minwise
 * hashing, Li and König 2010, "b-Bit Minwise Hashing"): where two full values agree their low bytes
 * agree, so the count of agreeing bytes is never below the count of agreeing values, and a
 * candidate whose count is below the threshold is dismissed exactly as its full signature would
 * dismiss it. Unrelated values agree in their low byte 1 time in 256, so almost every candidate that
 * the full estimate dismisses (99% of them on the bench corpus) is dismissed without reading its
 * signature from the documents table, a random page read each (54 of the 231 s of the main thread
 * at a million postings, when a cache held the full signatures of the last 262,144).
 */
const SKETCH_BYTES = 64 * 1024 * 1024

/**
 * Band keys gathered in memory before they are written in one sorted run (about 12 bytes each,
 * plus the lookup table): 3,000,000 is 300,000 postings at 10 bands. Written with every batch,
 * each batch's random keys rewrote most pages of the band index: at a million postings that was
 * most of the bytes the whole ingest wrote.
 */
export const BAND_RUN = 3_000_000

/** Sizes of the in-memory structures (defaults above; tests make them small). */
export interface DedupeLimits {
  bandRun?: number
  /** postings whose signature and shingles stay in memory */
  cacheSize?: number
  /** bytes of sketches (at least numHashes) */
  sketchBytes?: number
  /** lookups after which the band filter is built (default: 1,000 plus a tenth of the stored documents) */
  filterAfter?: number
  /** share of all band rows the recent level may hold (see RECENT_BANDS_FRACTION in db/bands.ts) */
  recentFraction?: number
}

interface Known {
  signature: Uint32Array
  /** the root of its chain: itself, or the original it reposts */
  root: number
  /** shingle hashes in text order (sorted only for an exact comparison) */
  shingles: Uint32Array | null
}

export class Deduper {
  /**
   * recently stored postings, slot id % cacheSize: candidates are checked without a query while
   * they are here (a ring, not a Map: evicting a Map's oldest entry walks over the holes that
   * earlier evictions left, which cost more than the rest of the dedupe bookkeeping)
   */
  private readonly known: (Known | undefined)[]
  private readonly knownIds: Float64Array
  private readonly cacheSize: number
  /** sketches of postings (slot id % sketchSlots, k bytes each; see SKETCH_BYTES), allocated on first use */
  private sketches: Uint8Array | null = null
  private sketchIds: Float64Array | null = null
  private readonly sketchSlots: number
  /** a candidate whose estimate is below this is not worth an exact check */
  private readonly minEstimate: number
  /** in-memory filter over stored band keys and text hashes, built once enough lookups make it pay */
  private filter: BandFilter | null
  private lookups = 0
  private readonly buildAfter: number
  /** band keys not yet in the band table (this run's, and any a killed run left), with their documents */
  private readonly pending = new PendingBands()
  /** every posting with id <= through has its band rows in the table */
  private through: number
  /** documents above `through` that this deduper knows of (stored by it, or caught up) */
  private accounted = 0
  /** state when the open batch began, restored when it rolls back */
  private saved = { mark: 0, through: 0, accounted: 0, throughStored: false }
  /** the open batch wrote the pending keys (they are dropped from memory once it commits) */
  private wrote = false
  private readonly bandRun: number
  private readonly recentFraction: number
  /** sketches of stored postings (written with each posting; read for candidates not in memory) */
  private readonly storedSketches: SketchStore
  /** false until the high-water mark is in the settings table (written with the first batch) */
  private throughStored: boolean
  /** documents from this id on were stored by this deduper: their sketches are in memory */
  private readonly firstOwnId: number
  /** the open batch's stored band rows (storedBandKey → ids), read by prefetch() */
  private readonly batchBands = new Map<number, number[]>()
  /** the open batch's older candidates' stored sketches, read by prefetch() */
  private readonly batchSketches = new Map<number, Buffer | undefined>()

  constructor(
    private readonly store: DocumentStore,
    readonly params: DedupeParams,
    limits: DedupeLimits = {},
  ) {
    if (params.numHashes % params.bands !== 0) throw new Error(`ingest.dedupe.numHashes (${params.numHashes}) must be a multiple of ingest.dedupe.bands (${params.bands})`)
    // four standard errors of the estimate at its widest (J = 0.5): sqrt(0.25 / k) each
    this.minEstimate = params.threshold - 4 * Math.sqrt(0.25 / params.numHashes)
    this.sketchSlots = Math.max(1, Math.floor((limits.sketchBytes ?? SKETCH_BYTES) / params.numHashes))
    this.filter = cachedBandFilter(store.db)
    // loading costs about one key read per stored band key; an index query costs about as much as
    // 30 of those, so the filter pays once a run has looked up a tenth of the stored documents
    this.buildAfter = limits.filterAfter ?? 1000 + Math.ceil(maxDocumentId(store.db) / 10)
    this.bandRun = Math.max(1, limits.bandRun ?? BAND_RUN)
    this.recentFraction = limits.recentFraction ?? RECENT_BANDS_FRACTION
    this.storedSketches = new SketchStore(store.db)
    this.cacheSize = Math.max(1, limits.cacheSize ?? CACHE_SIZE)
    this.known = new Array(this.cacheSize)
    this.knownIds = new Float64Array(this.cacheSize).fill(-1)
    const t = bandsThrough(store.db)
    this.through = t.through
    this.throughStored = t.stored
    this.firstOwnId = lastDocumentId(store.db) + 1
    this.catchUp()
  }

  /**
   * Postings stored after the band table's high-water mark (a run killed before it wrote its band
   * rows, or another writer's): their keys, from their stored signatures, join the pending run.
   */
  private catchUp(): void {
    const db = this.store.db
    const last = lastDocumentId(db)
    if (last <= this.through) return
    for (const row of signaturesAfter(db, this.through, last)) {
      const keys = bandKeys(signatureFromBytes(row.signature), this.params.bands)
      for (let band = 0; band < keys.length; band++) this.pending.add(band, keys[band]!, row.id)
    }
    this.accounted = documentsBetween(db, this.through, last)
  }

  /** true while band keys wait in memory for their sorted run */
  get hasPendingBands(): boolean {
    return this.pending.size > 0
  }

  /**
   * Call at the start of each batch transaction, with the analyses of the batch's documents (null
   * for one that will not be decided) so that what is stored for them is read at once (prefetch).
   */
  beginBatch(analyses: readonly (Analysis | null)[] = []): void {
    this.saved = { mark: this.pending.size, through: this.through, accounted: this.accounted, throughStored: this.throughStored }
    this.wrote = false
    this.prefetch(analyses)
  }

  /**
   * Reads, for a whole batch at once, the stored band rows of its postings' keys in key order, then
   * the stored sketches of the older candidates in id order, instead of one read per key and per
   * candidate in arrival order as each posting is decided. The band tables change only in
   * flushBands, after the batch's decisions, so these are the rows the decisions would have read.
   * Consecutive reads of sorted keys share the B-tree's pages: on a copy of the 1M benchmark
   * database, 97,000 band keys read in 0.20 s in key order against 0.68 s in arrival order (one
   * transaction), and the import of 10,000 new postings took 3.9 s instead of 4.7–4.9 s.
   */
  private prefetch(analyses: readonly (Analysis | null)[]): void {
    this.batchBands.clear()
    this.batchSketches.clear()
    let n = 0
    let postings = 0
    for (const a of analyses) {
      if (!a?.keys || !a.signature) continue
      n += a.keys.length
      postings++
    }
    if (n === 0) return
    // the filter that the batch's decisions would build is built before its reads
    const f = this.filterWhenDue(postings)
    const wanted = new Float64Array(n)
    n = 0
    for (const a of analyses) {
      if (!a?.keys || !a.signature) continue
      for (let band = 0; band < a.keys.length; band++) if (!f || f.hasBand(band, a.keys[band]!)) wanted[n++] = storedBandKey(band, a.keys[band]!)
    }
    const keys = wanted.subarray(0, n).sort()
    const older = new Set<number>()
    for (let i = 0; i < keys.length; i++) {
      const stored = keys[i]!
      if (i > 0 && stored === keys[i - 1]) continue
      const ids = this.store.bandDocuments(stored)
      this.batchBands.set(stored, ids)
      for (const id of ids) if (id < this.firstOwnId) older.add(id)
    }
    // postings stored by this deduper have their sketches in memory (lookup)
    for (const id of [...older].sort((x, y) => x - y)) this.batchSketches.set(id, this.storedSketches.sketch(id))
  }

  analyse(doc: Pick<DocumentInput, 'title' | 'body' | 'kind'>): Analysis {
    return analyseDocument(doc, this.params)
  }

  /** Decides against what is stored (including earlier documents of the same batch). */
  decide(a: Analysis, kind: DocumentInput['kind']): Decision {
    const none: Decision = { duplicateOf: null, similarity: null, how: null }
    if (kind !== 'posting') return none
    if (!this.filter) this.lookups++
    const f = this.filterWhenDue(0)
    const same = !f || f.hasText(a.textHash) ? this.store.sameText(a.textHash) : undefined
    if (same) return { duplicateOf: same.duplicate_of ?? same.id, similarity: 1, how: 'exact' }
    const keys = a.keys
    if (!a.signature || !keys) return none
    if (f && !keys.some((h, band) => f.hasBand(band, h))) return none
    let best: { root: number; j: number } | null = null
    let mine: Uint32Array | null = null
    for (const cid of this.candidates(keys, f)) {
      const c = this.lookup(cid, a.signature)
      if (!c || c.signature.length !== a.signature.length) continue
      if (estimateJaccard(a.signature, c.signature) < this.minEstimate) continue
      mine ??= toSortedSet(a.shingles)
      const j = exactJaccard(mine, this.shinglesOf(cid, c))
      if (j < this.params.threshold) continue
      if (!best || j > best.j || (j === best.j && c.root < best.root)) best = { root: c.root, j }
    }
    return best ? { duplicateOf: best.root, similarity: best.j, how: 'near' } : none
  }

  /**
   * Records a stored posting (inside the batch transaction): its band keys wait in memory until
   * flushBands(), and it joins the filter and the cache.
   */
  stored(id: number, a: Analysis, decision: Decision): void {
    this.accounted++
    const f = this.filter
    // exact-text reposts add nothing: their hash and band keys equal their original's
    if (decision.how === 'exact' || !a.keys || !a.signature) {
      if (f && decision.how !== 'exact' && a.keys) f.addText(a.textHash)
      return
    }
    const keys = a.keys
    for (let band = 0; band < keys.length; band++) {
      this.pending.add(band, keys[band]!, id)
      f?.addBand(band, keys[band]!)
    }
    if (f) {
      f.addText(a.textHash)
      if (f.full) this.rebuildFilter(f.size)
    }
    // the same transaction stores the posting's signature (see writer.ts) and its sketch
    this.storedSketches.insert(id, a.signature)
    const slot = id % this.cacheSize
    const root = decision.duplicateOf ?? id
    this.known[slot] = { signature: a.signature, root, shingles: a.shingles }
    this.knownIds[slot] = id
    const k = this.params.numHashes
    if (a.signature.length === k) {
      this.sketches ??= new Uint8Array(this.sketchSlots * k)
      this.sketchIds ??= new Float64Array(this.sketchSlots).fill(-1)
      const s = id % this.sketchSlots
      // a Uint8Array keeps the low 8 bits of each value it is given
      this.sketches.set(a.signature, s * k)
      this.sketchIds[s] = id
    }
  }

  /**
   * Writes the pending band keys in one sorted run when enough have gathered, or always when `all`
   * (the end of a run); call inside the batch transaction, after the batch's documents. Then moves
   * the high-water mark when every document below the newest one is accounted for (none stored by
   * another writer meanwhile; else the next writer catches up from the signatures).
   */
  flushBands(all = false): void {
    const db = this.store.db
    let covered = this.pending.size === 0
    const last = lastDocumentId(db)
    if (!covered && (all || this.pending.size >= this.bandRun)) {
      const { keys, docs } = this.pending.sortedFlat()
      // all band rows, about: every document up to the newest has its bands' rows, stored or these
      writeBandRun(db, keys, docs, last * this.params.bands, this.recentFraction)
      this.wrote = true
      covered = true
    }
    if (covered) {
      // ids are handed out as max + 1 and documents are never deleted, so `last - through` is the
      // count unless ids have gaps; only then is counting (which reads every row of the range) needed
      if (last > this.through && (last - this.through === this.accounted || documentsBetween(db, this.through, last) === this.accounted)) {
        setBandsThrough(db, last)
        this.through = last
        this.accounted = 0
        this.throughStored = true
      }
    }
    if (!this.throughStored) {
      // the mark this writer started from is stored with its first batch: postings above it may
      // then be committed without their rows, and a killed run leaves them to the next writer
      setBandsThrough(db, this.through)
      this.throughStored = true
    }
  }

  /** Call after the batch transaction committed. */
  committed(): void {
    this.batchBands.clear()
    this.batchSketches.clear()
    if (this.wrote) this.pending.clear()
    this.wrote = false
  }

  /** Forgets what the rolled-back batch added (its ids will be reused). */
  forget(): void {
    this.batchBands.clear()
    this.batchSketches.clear()
    this.known.fill(undefined)
    this.knownIds.fill(-1)
    this.sketchIds?.fill(-1)
    this.pending.truncate(this.saved.mark)
    this.through = this.saved.through
    this.accounted = this.saved.accounted
    this.throughStored = this.saved.throughStored
    this.wrote = false
  }

  /**
   * Stored documents and documents whose band rows are pending, sharing a band key. Only the bands
   * whose key the filter holds are looked up: it holds every stored and pending key, so the others
   * have no documents (most candidate postings share one or two of their ten keys).
   */
  private candidates(keys: readonly number[], f: BandFilter | null): Set<number> {
    const all = new Set<number>()
    for (let band = 0; band < keys.length; band++) {
      const key = keys[band]!
      if (f && !f.hasBand(band, key)) continue
      const stored = storedBandKey(band, key)
      for (const id of this.batchBands.get(stored) ?? this.store.bandDocuments(stored)) all.add(id)
      if (this.pending.size > 0) this.pending.forEach(band, key, (id) => all.add(id))
    }
    return all
  }

  /**
   * Candidate `id`'s signature and root, or null when it is not stored or its sketch already shows
   * that its estimate against `mine` is below the threshold (see SKETCH_BYTES).
   */
  private lookup(id: number, mine: Uint32Array): Known | null {
    const slot = id % this.cacheSize
    if (this.knownIds[slot] === id) return this.known[slot]!
    const k = this.params.numHashes
    if (mine.length === k) {
      // this run's postings have their sketch in memory, older ones in the sketch table
      const s = id % this.sketchSlots
      if (this.sketches && this.sketchIds![s] === id) {
        if (this.sketchDismisses(mine, this.sketches, s * k)) return null
      } else {
        const stored = this.batchSketches.has(id) ? this.batchSketches.get(id) : this.storedSketches.sketch(id)
        if (stored && stored.length === k && this.sketchDismisses(mine, stored, 0)) return null
      }
    }
    const row = this.store.signature(id)
    if (!row || !row.signature) return null
    return { signature: signatureFromBytes(row.signature), root: row.duplicate_of ?? row.id, shingles: null }
  }

  /** true when the k bytes of `sketch` from `offset` agree with `mine`'s low bytes too rarely for the threshold */
  private sketchDismisses(mine: Uint32Array, sketch: Uint8Array, offset: number): boolean {
    const k = mine.length
    let same = 0
    for (let i = 0, o = offset; i < k; i++, o++) if ((mine[i]! & 0xff) === sketch[o]) same++
    return same / k < this.minEstimate
  }

  private shinglesOf(id: number, k: Known): Uint32Array {
    if (k.shingles) return toSortedSet(k.shingles)
    const row = this.store.text(id)!
    return shingleSet(normalisedTextHash(dedupeText(row)).tokens, this.params.shingleSize)
  }

  /** The band filter, built first when `coming` more lookups reach the count that makes it pay. */
  private filterWhenDue(coming: number): BandFilter | null {
    if (!this.filter && this.lookups + coming >= this.buildAfter) this.rebuildFilter(200_000 * (this.params.bands + 1))
    return this.filter
  }

  private rebuildFilter(extra: number): void {
    // the table lacks the open batch's keys: add them, or the filter would deny them
    const f = buildBandFilter(this.store.db, extra)
    this.pending.forEachKey((band, key) => f.addBand(band, key))
    this.filter = f
  }
}
