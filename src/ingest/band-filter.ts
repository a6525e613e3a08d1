/**
 * @module ingest/band-filter
 * A Bloom filter (Bloom 1970, "Space/time trade-offs in hash coding with allowable errors";
 * https://en.wikipedia.org/wiki/Bloom_filter) over the stored LSH band keys and normalised-text
 * hashes of postings, so that the common case — a posting with no stored twin and no shared band —
 * costs a few bit tests instead of index queries. It can answer "maybe" for a key that is absent (then the query runs and finds nothing) but
 * never "no" for a key that is present, so dedupe decisions are exactly those without it.
 *
 * With 16 bits per key and 4 probes the false-positive rate per key is (1 - e^(-4/16))^4 ≈ 0.24 %.
 * Cost: building reads every stored key once, O(n); each test or insert is O(1).
 *
 * The filter is kept per connection between runs and trusted only while `PRAGMA data_version` is
 * unchanged, i.e. while no other connection has committed (SQLite documents that this pragma
 * changes exactly when another connection commits); otherwise it is rebuilt.
 */
import type { Db } from '../db/connection.ts'
import { bandKeyCount, iterateBandKeys, iteratePostingHashes, postingCount } from '../db/documents.ts'
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

  private static h1(key: number): number {
    const lo = key % 0x1_0000_0000
    const hi = Math.floor(key / 0x1_0000_0000)
    return fmix32(lo ^ Math.imul(hi + 1, 0x9e3779b9))
  }

  add(key: number): void {
    const a = BandFilter.h1(key)
    const b = fmix32(a ^ 0x5bd1e995) | 1
    for (let i = 0; i < PROBES; i++) {
      const bit = (a + Math.imul(i, b)) & this.mask
      this.bits[bit >>> 5]! |= 1 << (bit & 31)
    }
    this.count++
  }

  mightContain(key: number): boolean {
    const a = BandFilter.h1(key)
    const b = fmix32(a ^ 0x5bd1e995) | 1
    for (let i = 0; i < PROBES; i++) {
      const bit = (a + Math.imul(i, b)) & this.mask
      if ((this.bits[bit >>> 5]! & (1 << (bit & 31))) === 0) return false
    }
    return true
  }

  /** Builds a filter holding every stored band key, sized for `extra` more. */
  static load(db: Db, extra: number): BandFilter {
    const f = new BandFilter(bandKeyCount(db) + postingCount(db) + extra)
    for (const k of iterateBandKeys(db)) f.add(k)
    for (const h of iteratePostingHashes(db)) f.add(textKey(h))
    return f
  }

  get size(): number {
    return this.count
  }
}

/**
 * A text hash as a filter key: its first 48 bits, offset by 2^48 so that it never equals a band key
 * (those are below 2^36: band < 16 times 2^32).
 */
export function textKey(hash: string): number {
  return 0x1_0000_0000_0000 + parseInt(hash.slice(0, 12), 16)
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
