/**
 * @module ingest/band-filter
 * A Bloom filter (Bloom 1970, "Space/time trade-offs in hash coding with allowable errors";
 * https://en.wikipedia.org/wiki/Bloom_filter) over the stored LSH band keys and normalised-text
 * hashes of postings, so that the common case — a posting with no stored twin and no shared band —
 * costs a few bit tests instead of index queries. It can answer "maybe" for a key that is absent (then the query runs and finds nothing) but
 * never "no" for a key that is present, so dedupe decisions are exactly those without it.
 *
 * Band keys and text hashes share one bit array; they are told apart by mixing a different
 * band number into each (text hashes use band -1).
 * With 16 bits per key and 4 probes the false-positive rate per key is (1 - e^(-4/16))^4 ≈ 0.24 %.
 * Cost: building reads every stored key once, O(n); each test or insert is O(1).
 *
 * The filter is kept per connection between runs and trusted only while `PRAGMA data_version` is
 * unchanged, i.e. while no other connection has committed (SQLite documents that this pragma
 * changes exactly when another connection commits); otherwise it is rebuilt.
 */
import type { Db } from '../db/connection.ts'
import { BAND_KEY_FACTOR, bandKeyCount, iterateBandKeys, iteratePostingHashes, postingCount } from '../db/documents.ts'
import { fmix32 } from './minhash.ts'

const BITS_PER_KEY = 16
const PROBES = 4
const MIN_BITS = 1 << 22

export class BandFilter {
  private bits: Uint32Array
  private mask: number
  private count = 0
  private capacity: number

  constructor(expectedKeys: number) {
    let size = MIN_BITS
    while (size < expectedKeys * BITS_PER_KEY) size *= 2
    this.bits = new Uint32Array(size >>> 5)
    this.mask = size - 1
    this.capacity = size / BITS_PER_KEY
  }

  /** true when more keys went in than the filter was sized for (its error rate is then higher) */
  get full(): boolean {
    return this.count > this.capacity
  }

  /** First probe hash of band key `h` of band `band` (text hashes use band -1). */
  private static h1(band: number, h: number): number {
    return fmix32(h ^ Math.imul(band + 2, 0x9e3779b9))
  }

  private set(a: number): void {
    const b = fmix32(a ^ 0x5bd1e995) | 1
    for (let i = 0; i < PROBES; i++) {
      const bit = (a + Math.imul(i, b)) & this.mask
      this.bits[bit >>> 5]! |= 1 << (bit & 31)
    }
    this.count++
  }

  private test(a: number): boolean {
    const b = fmix32(a ^ 0x5bd1e995) | 1
    for (let i = 0; i < PROBES; i++) {
      const bit = (a + Math.imul(i, b)) & this.mask
      if ((this.bits[bit >>> 5]! & (1 << (bit & 31))) === 0) return false
    }
    return true
  }

  /** Adds band key `h` (32-bit, as computed) of band `band`. */
  addBand(band: number, h: number): void {
    this.set(BandFilter.h1(band, h))
  }

  hasBand(band: number, h: number): boolean {
    return this.test(BandFilter.h1(band, h))
  }

  /** Adds a stored key (band * 2^32 + h). */
  addStored(key: number): void {
    const band = Math.floor(key / BAND_KEY_FACTOR)
    this.addBand(band, key - band * BAND_KEY_FACTOR)
  }

  /** Adds a normalised-text hash (hex); its first 32 bits are the key. */
  addText(hash: string): void {
    this.set(BandFilter.h1(-1, parseInt(hash.slice(0, 8), 16)))
  }

  hasText(hash: string): boolean {
    return this.test(BandFilter.h1(-1, parseInt(hash.slice(0, 8), 16)))
  }

  /** Builds a filter holding every stored band key, sized for `extra` more. */
  static load(db: Db, extra: number): BandFilter {
    const f = new BandFilter(bandKeyCount(db) + postingCount(db) + extra)
    for (const k of iterateBandKeys(db)) f.addStored(k)
    for (const h of iteratePostingHashes(db)) f.addText(h)
    return f
  }

  get size(): number {
    return this.count
  }
}

const cache = new WeakMap<Db, { filter: BandFilter; dataVersion: number }>()

function dataVersion(db: Db): number {
  return db.pragma('data_version', { simple: true }) as number
}

/** The connection's filter if still trustworthy, else null. */
export function cachedBandFilter(db: Db): BandFilter | null {
  const c = cache.get(db)
  if (!c || c.dataVersion !== dataVersion(db) || c.filter.full) return null
  return c.filter
}

/** Builds (and caches) the connection's filter. */
export function buildBandFilter(db: Db, extraKeys: number): BandFilter {
  const filter = BandFilter.load(db, extraKeys)
  cache.set(db, { filter, dataVersion: dataVersion(db) })
  return filter
}

/** Drops the cached filter (after this connection rewrote the band table). */
export function invalidateBandFilter(db: Db): void {
  cache.delete(db)
}
