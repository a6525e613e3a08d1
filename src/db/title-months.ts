/**
 * @module db/title-months
 * The plan's kept counts of postings per (month, title, occupation) (`title_months`, migration 13):
 * how many counted postings (mapped originals, as the demand aggregates count them) and how many of
 * them mention each concept directly. Role suggestions need no more than that (every posting of a
 * title and occupation matches the same roles), and a month's counts are computed once and read
 * again until a document starts or stops counting in that month: `month_versions` moves on then
 * (db/curves.ts DemandDelta), and `title_month_marks` holds the version each month's rows were
 * computed at. A run after new postings of the last two months recomputes those two months only.
 *
 * If titles hardly repeat, the rows approach one per posting and the reading costs what reading the
 * postings did; job titles repeat in practice (common practice, no source), the benchmark's corpus
 * uses a few hundred.
 *
 * Counts: unsigned LEB128 varints (db/mention-lists.ts encodeCodes), pairs of (concept code,
 * postings), in code order.
 *
 * @example
 * ```ts
 * refreshTitleMonths(db, '2024-01') // => { months: 2, rows: 311 } (the months recomputed)
 * const counts = readTitleMonths(db, '2024-01')
 * countsById(counts, counts.rows[0]) // => Map { 'sql' => 9, 'excel' => 4 } (of counts.rows[0].postings, 12)
 * ```
 */
import type { Db } from './connection.ts'
import { isMapped } from './curves.ts'
import { conceptsByCode, decodeCodes, encodeCodes } from './mention-lists.ts'

/**
 * The postings of one month with one title and occupation: how many there are, and for each
 * concept how many of them mention it directly (a posting once per concept). Concepts are indices
 * into the `concepts` of the {@link TitleCounts} the row belongs to (typed arrays: a million
 * postings give about two million (row, concept) counts in a 24-month window, and Maps of them cost
 * the plan 0.45 s with their garbage).
 */
export interface TitleMonth {
  month: string
  title: string
  occupation: string | null
  postings: number
  /** concept indices, ascending */
  concepts: Uint32Array
  /** postings mentioning each of `concepts` */
  mentions: Uint32Array
}

/** Rows of counts with the concept id of every index they use. */
export interface TitleCounts {
  /** concept id by index (undefined where no row uses the index) */
  concepts: readonly (string | undefined)[]
  rows: TitleMonth[]
}

/** A row's counts by concept id (for checks and reports). */
export function countsById(counts: TitleCounts, row: TitleMonth): Map<string, number> {
  return new Map(Array.from(row.concepts, (c, k) => [counts.concepts[c]!, row.mentions[k]!]))
}

/** The posting months from `since` on whose kept counts are missing or older than their month's version. */
export function staleTitleMonths(db: Db, since: string | null): string[] {
  return db
    .prepare(
      `SELECT v.month FROM month_versions v LEFT JOIN title_month_marks m ON m.month = v.month
         WHERE v.kind = 'posting' AND v.month >= ? AND (m.version IS NULL OR m.version <> v.version)
       UNION
       SELECT m.month FROM title_month_marks m
         WHERE m.month >= ? AND NOT EXISTS (SELECT 1 FROM month_versions v WHERE v.kind = 'posting' AND v.month = m.month)
       ORDER BY 1`,
    )
    .pluck()
    .all(since ?? '', since ?? '') as string[]
}

/**
 * Recomputes the kept counts of every stale month from `since` on (all months when null) from the
 * counted postings and their rows of `mention_lists` (codes, each concept once a document), summed
 * as codes without turning them into concept ids; titles and occupations come from the
 * `documents_titles` index, not the documents' rows. Call inside a transaction (the plan's).
 * @returns the months recomputed and the rows they now have
 */
export function refreshTitleMonths(db: Db, since: string | null): { months: number; rows: number } {
  const stale = staleTitleMonths(db, since)
  if (stale.length === 0) return { months: 0, rows: 0 }
  const postings = db
    .prepare(
      `SELECT d.title, coalesce(d.occupation, ''), l.codes
       FROM documents d INDEXED BY documents_titles
         LEFT JOIN mention_lists l ON l.kind = d.kind AND l.month = d.month AND l.document_id = d.id
       WHERE d.kind = 'posting' AND d.month = ? AND d.duplicate_of IS NULL AND ${isMapped('d')}`,
    )
    .raw()
  const clear = db.prepare('DELETE FROM title_months WHERE month = ?')
  const insert = db.prepare('INSERT INTO title_months (month, title, occupation, postings, counts) VALUES (?, ?, ?, ?, ?)')
  const version = db.prepare("SELECT version FROM month_versions WHERE kind = 'posting' AND month = ?").pluck()
  const mark = db.prepare('INSERT INTO title_month_marks (month, version) VALUES (?, ?) ON CONFLICT DO UPDATE SET version = excluded.version')
  const unmark = db.prepare('DELETE FROM title_month_marks WHERE month = ?')
  let rows = 0
  for (const month of stale) {
    clear.run(month)
    const groups = new Map<string, { title: string; occupation: string; postings: number; counts: Map<number, number> }>()
    for (const [title, occupation, codes] of postings.iterate(month) as IterableIterator<[string, string, Buffer | null]>) {
      const key = `${title}\u0000${occupation}`
      let g = groups.get(key)
      if (!g) groups.set(key, (g = { title, occupation, postings: 0, counts: new Map() }))
      g.postings++
      if (codes) for (const code of decodeCodes(codes)) g.counts.set(code, (g.counts.get(code) ?? 0) + 1)
    }
    for (const g of groups.values()) {
      const pairs = [...g.counts].sort((x, y) => x[0] - y[0])
      insert.run(month, g.title, g.occupation, g.postings, encodeCodes(pairs.flat()))
      rows++
    }
    const v = version.get(month) as number | undefined
    if (v === undefined) unmark.run(month)
    else mark.run(month, v)
  }
  return { months: stale.length, rows }
}

/**
 * The kept counts from `since` on (all months when null), in month, title, occupation order, only
 * for the titles and occupations `keep` accepts (the others are not decoded); concept indices are
 * the concepts' codes. Run {@link refreshTitleMonths} first in the same transaction, or stale
 * months are read as they were.
 */
export function readTitleMonths(db: Db, since: string | null, keep: (title: string, occupation: string | null) => boolean = () => true): TitleCounts {
  const rows = db
    .prepare('SELECT month, title, occupation, postings, counts FROM title_months WHERE month >= ? ORDER BY month, title, occupation')
    .raw()
    .iterate(since ?? '') as IterableIterator<[string, string, string, number, Buffer]>
  const out: TitleMonth[] = []
  let scratch = new Uint32Array(1024)
  for (const [month, title, occ, postings, blob] of rows) {
    const occupation = occ === '' ? null : occ
    if (!keep(title, occupation)) continue
    // decodeCodes (db/mention-lists.ts) inlined: (code, postings) pairs straight into typed arrays
    if (scratch.length < blob.length) scratch = new Uint32Array(2 * blob.length)
    let n = 0
    let value = 0
    let shift = 0
    for (let i = 0; i < blob.length; i++) {
      const x = blob[i]!
      value |= (x & 127) << shift
      if (x & 128) {
        shift += 7
        continue
      }
      scratch[n++] = value
      value = 0
      shift = 0
    }
    const pairs = n >> 1
    const concepts = new Uint32Array(pairs)
    const mentions = new Uint32Array(pairs)
    for (let k = 0; k < pairs; k++) {
      concepts[k] = scratch[2 * k]!
      mentions[k] = scratch[2 * k + 1]!
    }
    out.push({ month, title, occupation, postings, concepts, mentions })
  }
  return { concepts: conceptsByCode(db, null), rows: out }
}
