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
import { DocumentStore, maxDocumentId } from '../db/documents.ts'
import { type BandFilter, buildBandFilter, cachedBandFilter, textKey } from './band-filter.ts'
import type { DocumentInput } from './document.ts'
import { bandKeys, estimateJaccard, exactJaccard, minhashSeeds, minhashSignature, shingleHashes, shingleSet, signatureFromBytes, toSortedSet } from './minhash.ts'
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
  return `minhash-v1:k=${p.numHashes}:b=${p.bands}:w=${p.shingleSize}`
}

const CACHE_SIZE = 20_000

export class Deduper {
  private readonly seeds: Uint32Array
  /** shingle sets of recently stored postings: reposts tend to follow their original closely */
  private readonly recent = new Map<number, Uint32Array>()
  /** candidates whose estimate is this far below the threshold are not worth an exact check */
  private readonly slack: number
  /** in-memory filter over stored band keys, built once enough lookups make it pay */
  private filter: BandFilter | null
  private lookups = 0
  private readonly buildAfter: number
  /**
   * band keys (stored form) and document ids of the open batch, written sorted when the batch
   * ends; flat arrays, because only candidates the filter lets through scan them
   */
  private pendingKeys: number[] = []
  private pendingIds: number[] = []

  constructor(
    private readonly store: DocumentStore,
    readonly params: DedupeParams,
  ) {
    if (params.numHashes % params.bands !== 0) throw new Error(`ingest.dedupe.numHashes (${params.numHashes}) must be a multiple of ingest.dedupe.bands (${params.bands})`)
    this.seeds = minhashSeeds(params.numHashes)
    // four standard errors of the estimate at its widest (J = 0.5): sqrt(0.25 / k) each
    this.slack = 4 * Math.sqrt(0.25 / params.numHashes)
    this.filter = cachedBandFilter(store.db)
    // loading costs about one key read per stored band key; an index query costs about as much as
    // 30 of those, so the filter pays once a run has looked up a tenth of the stored documents
    this.buildAfter = 1000 + Math.ceil(maxDocumentId(store.db) / 10)
  }

  analyse(doc: Pick<DocumentInput, 'title' | 'body' | 'kind'>): Analysis {
    const { hash, tokens } = normalisedTextHash(dedupeText(doc))
    if (doc.kind !== 'posting') return { textHash: hash, shingles: new Uint32Array(0), signature: null, keys: null }
    const shingles = shingleHashes(tokens, this.params.shingleSize)
    if (shingles.length === 0) return { textHash: hash, shingles, signature: null, keys: null }
    const signature = minhashSignature(shingles, this.seeds)
    return { textHash: hash, shingles, signature, keys: bandKeys(signature, this.params.bands) }
  }

  /**
   * Decides against what was stored before document `id` (including earlier documents of the
   * same batch); `id` itself is already inserted.
   */
  decide(id: number, a: Analysis, kind: DocumentInput['kind']): Decision {
    if (kind !== 'posting') return { duplicateOf: null, similarity: null, how: null }
    if (!this.filter && ++this.lookups >= this.buildAfter) this.rebuildFilter(200_000 * (this.params.bands + 1))
    const f = this.filter
    const same = !f || f.mightContain(textKey(a.textHash)) ? this.store.sameText(a.textHash, id) : undefined
    if (same) return { duplicateOf: same.duplicate_of ?? same.id, similarity: 1, how: 'exact' }
    if (!a.signature || !a.keys) return { duplicateOf: null, similarity: null, how: null }
    if (f && !a.keys.some((k, band) => f.mightContain(band * 0x1_0000_0000 + k))) return { duplicateOf: null, similarity: null, how: null }
    let best: { root: number; j: number } | null = null
    let mine: Uint32Array | null = null
    for (const id of this.candidates(a.keys)) {
      const row = this.store.signature(id)
      if (!row || !row.signature) continue
      const stored = signatureFromBytes(row.signature)
      if (stored.length !== a.signature.length) continue
      if (estimateJaccard(a.signature, stored) < this.params.threshold - this.slack) continue
      mine ??= toSortedSet(a.shingles)
      const j = exactJaccard(mine, this.shinglesOf(id, row))
      if (j < this.params.threshold) continue
      const root = row.duplicate_of ?? row.id
      if (!best || j > best.j || (j === best.j && root < best.root)) best = { root, j }
    }
    return best ? { duplicateOf: best.root, similarity: best.j, how: 'near' } : { duplicateOf: null, similarity: null, how: null }
  }

  /** Records a stored posting in the filter and stores its band keys (inside the batch transaction). */
  stored(id: number, a: Analysis, decision: Decision): void {
    const f = this.filter
    if (decision.how === 'exact' || !a.keys) {
      if (f && decision.how !== 'exact') f.add(textKey(a.textHash))
      return
    }
    // exact-text reposts add nothing: their hash and band keys equal their original's
    for (let band = 0; band < a.keys.length; band++) {
      const key = band * 0x1_0000_0000 + a.keys[band]!
      this.pendingKeys.push(key)
      this.pendingIds.push(id)
      f?.add(key)
    }
    if (f) {
      f.add(textKey(a.textHash))
      if (f.full) this.rebuildFilter(f.size)
    }
  }

  /** Writes the open batch's band keys, sorted by key (call inside the batch transaction). */
  flushBands(): void {
    const order = Array.from(this.pendingKeys.keys())
    order.sort((x, y) => this.pendingKeys[x]! - this.pendingKeys[y]! || this.pendingIds[x]! - this.pendingIds[y]!)
    this.store.insertBandRows(order.map((i) => [this.pendingKeys[i]!, this.pendingIds[i]!] as const))
    this.pendingKeys = []
    this.pendingIds = []
  }

  /** Stored documents and documents of the open batch sharing a band key. */
  private candidates(keys: readonly number[]): number[] {
    const ids = this.store.candidates(keys)
    if (this.pendingKeys.length === 0) return ids
    const all = new Set(ids)
    const wanted = new Set(DocumentStore.storedKeys(keys))
    for (let i = 0; i < this.pendingKeys.length; i++) if (wanted.has(this.pendingKeys[i]!)) all.add(this.pendingIds[i]!)
    return [...all]
  }

  private rebuildFilter(extra: number): void {
    // the table lacks the open batch's keys: add them, or the filter would deny them
    const f = buildBandFilter(this.store.db, extra)
    for (const key of this.pendingKeys) f.add(key)
    this.filter = f
  }

  /** Keeps the shingle set of a stored posting for later exact checks. */
  remember(id: number, a: Analysis): void {
    if (a.shingles.length === 0) return
    // kept unsorted: most are never compared, and sorting all of them would cost more
    this.recent.set(id, a.shingles)
    if (this.recent.size > CACHE_SIZE) this.recent.delete(this.recent.keys().next().value!)
  }

  /** Forgets cached sets and pending keys (after a rolled-back batch, whose ids will be reused). */
  forget(): void {
    this.recent.clear()
    this.pendingKeys = []
    this.pendingIds = []
  }

  private shinglesOf(id: number, row: { title: string; body: string }): Uint32Array {
    const cached = this.recent.get(id)
    if (cached) return toSortedSet(cached)
    return shingleSet(normalisedTextHash(dedupeText(row)).tokens, this.params.shingleSize)
  }
}
