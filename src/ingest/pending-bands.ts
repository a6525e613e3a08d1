/**
 * @module ingest/pending-bands
 * The band keys of the open batch: appended as postings are stored, looked up when a later posting
 * of the same batch needs candidates, and written to the database sorted by key when the batch
 * commits. An open-addressing hash table over flat typed arrays (linear probing; Knuth, TAOCP
 * vol. 3, section 6.4, algorithm L) keeps the per-key cost to a few integer operations with no
 * allocation, which a Map of boxed 64-bit keys did not.
 */
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
    const rows: (readonly [number, number])[] = new Array(this.n)
    for (let i = 0; i < this.n; i++) rows[i] = [this.band[i]! * 0x1_0000_0000 + this.key[i]!, this.doc[i]!]
    rows.sort((x, y) => x[0] - y[0] || x[1] - y[1])
    return rows
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
