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
 *
 * The rows sit in two levels (migration 6): `document_bands`, the big one, and
 * `document_bands_recent`, which takes a run's rows while it stays below a fraction of all of them.
 * An incremental run's 100,000 random keys then rewrite the pages of a small table instead of most
 * of the ten million rows of the big one (at a million postings). Once the small level would pass
 * the fraction, its rows and the run's go into the big level in one sorted pass and it is emptied.
 * Lookups and the band filter read both levels; which level holds a row changes no decision.
 */
import type { Statement } from 'better-sqlite3'
import type { Db } from './connection.ts'
import { getSetting, setSetting } from './connection.ts'

const THROUGH = 'ingest.bands.through'
const CHUNK = 100

/** The two levels of band rows. */
export type BandLevel = 'document_bands' | 'document_bands_recent'

/**
 * Default share of all band rows that the recent level may hold before it is merged into the big
 * one. A merge rewrites most of the big level (it costs about what one incremental run cost before
 * the levels); at an eighth, runs of 10,000 postings into a million merge once every 12 or so, and
 * the recent level stays within 1.3 million rows (about 25 MB).
 */
export const RECENT_BANDS_FRACTION = 1 / 8

const chunkStatements = new WeakMap<Db, Map<BandLevel, { many: Statement; one: Statement }>>()

/**
 * Inserts (stored key, document id) pairs, given sorted by key, so that each index page is visited
 * once in order. Call inside a transaction.
 */
export function insertSortedBandRows(db: Db, keys: Float64Array, docs: Float64Array, level: BandLevel = 'document_bands'): void {
  let levels = chunkStatements.get(db)
  if (!levels) chunkStatements.set(db, (levels = new Map()))
  let st = levels.get(level)
  if (!st) {
    st = {
      many: db.prepare(`INSERT OR IGNORE INTO ${level}(key, document_id) VALUES ${Array.from({ length: CHUNK }, () => '(?, ?)').join(', ')}`),
      one: db.prepare(`INSERT OR IGNORE INTO ${level}(key, document_id) VALUES (?, ?)`),
    }
    levels.set(level, st)
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

/** Rows in the recent level. */
export function recentBandRows(db: Db): number {
  return db.prepare('SELECT COUNT(*) FROM document_bands_recent').pluck().get() as number
}

/**
 * Moves every row of the recent level into the big one, read in key order so that each page of the
 * big level is visited once, and empties the recent level. Call inside a transaction.
 */
export function mergeRecentBands(db: Db): void {
  db.prepare('INSERT OR IGNORE INTO document_bands(key, document_id) SELECT key, document_id FROM document_bands_recent ORDER BY key, document_id').run()
  db.prepare('DELETE FROM document_bands_recent').run()
}

/**
 * Writes a sorted run of band rows (see insertSortedBandRows) to the level it belongs in: the
 * recent level while it stays within `fraction` of `totalRows` (an estimate of all band rows,
 * stored and these), else the big level together with the recent level's rows, which is emptied.
 * Call inside a transaction.
 * @returns the level written, and whether the recent level was merged
 */
export function writeBandRun(db: Db, keys: Float64Array, docs: Float64Array, totalRows: number, fraction = RECENT_BANDS_FRACTION): { level: BandLevel; merged: boolean } {
  const recent = recentBandRows(db)
  if (recent + keys.length <= fraction * totalRows) {
    insertSortedBandRows(db, keys, docs, 'document_bands_recent')
    return { level: 'document_bands_recent', merged: false }
  }
  if (recent === 0) {
    insertSortedBandRows(db, keys, docs)
    return { level: 'document_bands', merged: false }
  }
  // the run joins the small level first, so that the big one is written in one sorted pass
  insertSortedBandRows(db, keys, docs, 'document_bands_recent')
  mergeRecentBands(db)
  return { level: 'document_bands', merged: true }
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
