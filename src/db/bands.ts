/**
 * @module db/bands
 * SQL for writing the LSH band index (`document_bands`) in large sorted runs, and for finding the
 * postings whose band rows are not written yet. Used only by ingest (src/ingest/dedupe.ts).
 *
 * Band rows are derived data: a posting's rows follow from its stored signature. They are written
 * in sorted runs of many batches instead of with every batch, because each run of random keys
 * rewrites most pages of the (randomly keyed) index; the setting `ingest.bands.through` records
 * the highest document id up to which every posting's rows are written. Postings stored after it
 * (by a run that was killed, say) get their rows from their signatures when the next writer starts.
 */
import type { Statement } from 'better-sqlite3'
import type { Db } from './connection.ts'
import { getSetting, setSetting } from './connection.ts'

const THROUGH = 'ingest.bands.through'
const CHUNK = 100

const chunkStatements = new WeakMap<Db, { many: Statement; one: Statement }>()

/**
 * Inserts (stored key, document id) pairs, given sorted by key, so that each index page is visited
 * once in order. Call inside a transaction.
 */
export function insertSortedBandRows(db: Db, keys: Float64Array, docs: Float64Array): void {
  let st = chunkStatements.get(db)
  if (!st) {
    st = {
      many: db.prepare(`INSERT OR IGNORE INTO document_bands(key, document_id) VALUES ${Array.from({ length: CHUNK }, () => '(?, ?)').join(', ')}`),
      one: db.prepare('INSERT OR IGNORE INTO document_bands(key, document_id) VALUES (?, ?)'),
    }
    chunkStatements.set(db, st)
  }
  const args: number[] = new Array(2 * CHUNK)
  let i = 0
  for (; i + CHUNK <= keys.length; i += CHUNK) {
    for (let j = 0; j < CHUNK; j++) {
      args[2 * j] = keys[i + j]!
      args[2 * j + 1] = docs[i + j]!
    }
    st.many.run(args)
  }
  for (; i < keys.length; i++) st.one.run(keys[i]!, docs[i]!)
}

/**
 * The highest document id up to which every posting's band rows are stored, and whether the setting
 * exists. A database without it was written with rows in every batch: all of it is covered (the
 * caller stores the value with its first batch, so that a run that fails changes nothing).
 */
export function bandsThrough(db: Db): { through: number; stored: boolean } {
  const v = getSetting(db, THROUGH)
  if (v !== undefined) return { through: Number(v), stored: true }
  return { through: lastDocumentId(db), stored: false }
}

export function setBandsThrough(db: Db, id: number): void {
  setSetting(db, THROUGH, String(id))
}

/** After a full rebuild of the band rows: every stored posting is covered (a missing mark says so already). */
export function markBandsComplete(db: Db): void {
  if (getSetting(db, THROUGH) !== undefined) setBandsThrough(db, lastDocumentId(db))
}

/** How many documents have ids in (after, upTo]. */
export function documentsBetween(db: Db, after: number, upTo: number): number {
  return db.prepare('SELECT COUNT(*) FROM documents WHERE id > ? AND id <= ?').pluck().get(after, upTo) as number
}

/** Postings stored after `after` (up to `upTo`) that carry a signature, in id order. */
export function signaturesAfter(db: Db, after: number, upTo = Number.MAX_SAFE_INTEGER): IterableIterator<{ id: number; signature: Buffer }> {
  return db
    .prepare("SELECT id, signature FROM documents WHERE id > ? AND id <= ? AND kind = 'posting' AND signature IS NOT NULL ORDER BY id")
    .iterate(after, upTo) as IterableIterator<{ id: number; signature: Buffer }>
}

/** The highest document id (0 when there is none). */
export function lastDocumentId(db: Db): number {
  return db.prepare('SELECT COALESCE(MAX(id), 0) FROM documents').pluck().get() as number
}
