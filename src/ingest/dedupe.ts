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
import type { DocumentStore } from '../db/documents.ts'
import type { DocumentInput } from './document.ts'
import { bandKeys, estimateJaccard, exactJaccard, minhashSeeds, minhashSignature, shingleSet, signatureFromBytes } from './minhash.ts'
import { normalisedTextHash } from './text.ts'

export interface DedupeParams {
  threshold: number
  numHashes: number
  bands: number
  shingleSize: number
}

export interface Analysis {
  textHash: string
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

  constructor(
    private readonly store: DocumentStore,
    readonly params: DedupeParams,
  ) {
    if (params.numHashes % params.bands !== 0) throw new Error(`ingest.dedupe.numHashes (${params.numHashes}) must be a multiple of ingest.dedupe.bands (${params.bands})`)
    this.seeds = minhashSeeds(params.numHashes)
    // four standard errors of the estimate at its widest (J = 0.5): sqrt(0.25 / k) each
    this.slack = 4 * Math.sqrt(0.25 / params.numHashes)
  }

  analyse(doc: Pick<DocumentInput, 'title' | 'body' | 'kind'>): Analysis {
    const { hash, tokens } = normalisedTextHash(dedupeText(doc))
    if (doc.kind !== 'posting') return { textHash: hash, shingles: new Uint32Array(0), signature: null, keys: null }
    const shingles = shingleSet(tokens, this.params.shingleSize)
    if (shingles.length === 0) return { textHash: hash, shingles, signature: null, keys: null }
    const signature = minhashSignature(shingles, this.seeds)
    return { textHash: hash, shingles, signature, keys: bandKeys(signature, this.params.bands) }
  }

  /** Decides against what is stored (including earlier documents of the same batch). */
  decide(a: Analysis, kind: DocumentInput['kind']): Decision {
    if (kind !== 'posting') return { duplicateOf: null, similarity: null, how: null }
    const same = this.store.sameText(a.textHash)
    if (same) return { duplicateOf: same.duplicate_of ?? same.id, similarity: 1, how: 'exact' }
    if (!a.signature || !a.keys) return { duplicateOf: null, similarity: null, how: null }
    let best: { root: number; j: number } | null = null
    for (const id of this.store.candidates(a.keys)) {
      const row = this.store.signature(id)
      if (!row || !row.signature) continue
      const stored = signatureFromBytes(row.signature)
      if (stored.length !== a.signature.length) continue
      if (estimateJaccard(a.signature, stored) < this.params.threshold - this.slack) continue
      const j = exactJaccard(a.shingles, this.shinglesOf(id, row))
      if (j < this.params.threshold) continue
      const root = row.duplicate_of ?? row.id
      if (!best || j > best.j || (j === best.j && root < best.root)) best = { root, j }
    }
    return best ? { duplicateOf: best.root, similarity: best.j, how: 'near' } : { duplicateOf: null, similarity: null, how: null }
  }

  /** Keeps the shingle set of a stored posting for later exact checks. */
  remember(id: number, a: Analysis): void {
    if (a.shingles.length === 0) return
    this.recent.set(id, a.shingles)
    if (this.recent.size > CACHE_SIZE) this.recent.delete(this.recent.keys().next().value!)
  }

  /** Forgets cached sets (after a rolled-back batch, whose ids will be reused). */
  forget(): void {
    this.recent.clear()
  }

  private shinglesOf(id: number, row: { title: string; body: string }): Uint32Array {
    const cached = this.recent.get(id)
    if (cached) return cached
    return shingleSet(normalisedTextHash(dedupeText(row)).tokens, this.params.shingleSize)
  }
}
