/**
 * @module ingest/pending-bands
 * Band keys not yet written to the database: appended as postings are stored, looked up when a
 * later posting needs candidates, and written sorted by key in one pass when enough have gathered
 * (see dedupe.ts: band rows are derived data, written in large sorted runs). An open-addressing hash table over flat typed arrays (linear probing; Knuth, TAOCP
 * vol. 3, section 6.4, algorithm L) keeps the per-key cost to a few integer operations with no
 * allocation, which a Map of boxed 64-bit keys did not.
 */
import { storedBandKey } from '../db/documents.ts'
import { fmix32 } from './minhash.ts'

export class PendingBands {
  /** band of entry i */
  private band = new Int32Array(1024)
  /** 32-bit key of entry i */
  private key = new Uint32Array(1024)
  /** document id of entry i */
  private doc = new Int32Array(1024)
  private n = 0
  /** slot -> entry index + 1 (0 = empty) */
  private table = new Int32Array(4096)

  get size(): number {
    return this.n
  }

  private static slot(band: number, key: number): number {
    return fmix32(key ^ Math.imul(band + 1, 0x27d4eb2f))
  }

  add(band: number, key: number, doc: number): void {
    if (this.n === this.band.length) this.growEntries()
    if ((this.n + 1) * 2 > this.table.length) this.growTable()
    const i = this.n++
    this.band[i] = band
    this.key[i] = key
    this.doc[i] = doc
    this.place(i)
  }

  private place(i: number): void {
    const mask = this.table.length - 1
    let s = PendingBands.slot(this.band[i]!, this.key[i]!) & mask
    while (this.table[s] !== 0) s = (s + 1) & mask
    this.table[s] = i + 1
  }

  /** Calls `fn` with each document that has this key in this band. */
  forEach(band: number, key: number, fn: (doc: number) => void): void {
    const mask = this.table.length - 1
    for (let s = PendingBands.slot(band, key) & mask; this.table[s] !== 0; s = (s + 1) & mask) {
      const i = this.table[s]! - 1
      if (this.key[i] === key && this.band[i] === band) fn(this.doc[i]!)
    }
  }

  /** The entries as (stored key = band * 2^32 + key, document id), sorted by stored key then id. */
  sortedRows(): (readonly [number, number])[] {
    const order = this.sortedOrder()
    const rows: (readonly [number, number])[] = new Array(this.n)
    for (let r = 0; r < this.n; r++) {
      const i = order[r]!
      rows[r] = [storedBandKey(this.band[i]!, this.key[i]!), this.doc[i]!]
    }
    return rows
  }

  /**
   * The entries in flat arrays sorted by (band, key, document id): stored key = band * 2^32 + key.
   * Entries are added in ascending document order, so a stable sort by (band, key) is enough:
   * LSD radix sort (Knuth, TAOCP vol. 3, section 5.2.5), 16 bits of the key per pass, then the band
   * by counting; O(n) with no comparisons and no per-entry objects.
   */
  sortedFlat(): { keys: Float64Array; docs: Float64Array } {
    const order = this.sortedOrder()
    const keys = new Float64Array(this.n)
    const docs = new Float64Array(this.n)
    for (let r = 0; r < this.n; r++) {
      const i = order[r]!
      keys[r] = storedBandKey(this.band[i]!, this.key[i]!)
      docs[r] = this.doc[i]!
    }
    return { keys, docs }
  }

  /** Entry indexes in (band, key, insertion) order. */
  private sortedOrder(): Int32Array {
    const n = this.n
    let from = new Int32Array(n)
    let to = new Int32Array(n)
    for (let i = 0; i < n; i++) from[i] = i
    const count = new Int32Array(65_536 + 1)
    for (const shift of [0, 16]) {
      count.fill(0)
      for (let i = 0; i < n; i++) count[((this.key[i]! >>> shift) & 0xffff) + 1]!++
      for (let d = 1; d <= 65_536; d++) count[d]! += count[d - 1]!
      for (let r = 0; r < n; r++) {
        const i = from[r]!
        to[count[(this.key[i]! >>> shift) & 0xffff]!++] = i
      }
      ;[from, to] = [to, from]
    }
    let maxBand = 0
    for (let i = 0; i < n; i++) if (this.band[i]! > maxBand) maxBand = this.band[i]!
    const bc = new Int32Array(maxBand + 2)
    for (let i = 0; i < n; i++) bc[this.band[i]! + 1]!++
    for (let b = 1; b <= maxBand + 1; b++) bc[b]! += bc[b - 1]!
    for (let r = 0; r < n; r++) {
      const i = from[r]!
      to[bc[this.band[i]!]!++] = i
    }
    return to
  }

  /** Drops the entries added after the first `n` (a rolled-back batch's). */
  truncate(n: number): void {
    if (n >= this.n) return
    this.n = n
    this.table.fill(0)
    for (let i = 0; i < this.n; i++) this.place(i)
  }

  /** Every stored key (for adding to a rebuilt filter). */
  forEachKey(fn: (band: number, key: number) => void): void {
    for (let i = 0; i < this.n; i++) fn(this.band[i]!, this.key[i]!)
  }

  clear(): void {
    this.n = 0
    this.table.fill(0)
  }

  private growEntries(): void {
    const size = this.band.length * 2
    const band = new Int32Array(size)
    band.set(this.band)
    const key = new Uint32Array(size)
    key.set(this.key)
    const doc = new Int32Array(size)
    doc.set(this.doc)
    this.band = band
    this.key = key
    this.doc = doc
  }

  private growTable(): void {
    this.table = new Int32Array(this.table.length * 2)
    for (let i = 0; i < this.n; i++) this.place(i)
  }
}
