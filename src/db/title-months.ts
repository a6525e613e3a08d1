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
 * readTitleMonths(db, '2024-01')[0] // => { month: '2024-01', title: 'Data Analyst', occupation: null, postings: 12, counts: Map { 'sql' => 9 } }
 * ```
 */
import type { Db } from './connection.ts'
import { conceptCodes, conceptsByCode, decodeCodes, encodeCodes } from './mention-lists.ts'
import { readDocumentConcepts, type DocumentConcepts } from './plan.ts'

/**
 * The postings of one month with one title and occupation: how many there are, and for each
 * concept how many of them mention it directly (a posting once per concept).
 */
export interface TitleMonth {
  month: string
  title: string
  occupation: string | null
  postings: number
  counts: ReadonlyMap<string, number>
}

/** Postings summed per (month, title, occupation), in month, title, occupation order (null occupation as ''). */
export function titleMonths(docs: Iterable<Pick<DocumentConcepts, 'month' | 'title' | 'occupation' | 'concepts'>>): TitleMonth[] {
  const groups = new Map<string, { month: string; title: string; occupation: string | null; postings: number; counts: Map<string, number> }>()
  for (const doc of docs) {
    const occupation = doc.occupation ?? ''
    const key = `${doc.month}\u0000${doc.title}\u0000${occupation}`
    let g = groups.get(key)
    if (!g) groups.set(key, (g = { month: doc.month, title: doc.title, occupation: occupation === '' ? null : occupation, postings: 0, counts: new Map() }))
    g.postings++
    for (const c of new Set(doc.concepts)) g.counts.set(c, (g.counts.get(c) ?? 0) + 1)
  }
  const order = (a: string, b: string) => (a < b ? -1 : a > b ? 1 : 0)
  return [...groups.values()].sort((a, b) => order(a.month, b.month) || order(a.title, b.title) || order(a.occupation ?? '', b.occupation ?? ''))
}

/** The posting months from `since` on whose kept counts are missing or older than their month's version. */
export function staleTitleMonths(db: Db, since: string | null): string[] {
  const rows = db
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
  return rows
}

/**
 * Recomputes the kept counts of every stale month from `since` on (all months when null) from the
 * postings and their mention lists. Call inside a transaction (the plan's).
 * @returns the months recomputed and the rows they now have
 */
export function refreshTitleMonths(db: Db, since: string | null): { months: number; rows: number } {
  const stale = staleTitleMonths(db, since)
  if (stale.length === 0) return { months: 0, rows: 0 }
  const clear = db.prepare('DELETE FROM title_months WHERE month = ?')
  const insert = db.prepare('INSERT INTO title_months (month, title, occupation, postings, counts) VALUES (?, ?, ?, ?, ?)')
  const version = db.prepare("SELECT version FROM month_versions WHERE kind = 'posting' AND month = ?").pluck()
  const mark = db.prepare('INSERT INTO title_month_marks (month, version) VALUES (?, ?) ON CONFLICT DO UPDATE SET version = excluded.version')
  const unmark = db.prepare('DELETE FROM title_month_marks WHERE month = ?')
  let rows = 0
  for (const month of stale) {
    clear.run(month)
    const groups = titleMonths(readDocumentConcepts(db, 'posting', { since: month, until: month }))
    const codes = conceptCodes(db, new Set(groups.flatMap((g) => [...g.counts.keys()])))
    for (const g of groups) {
      const pairs = [...g.counts].map(([id, n]) => [codes.get(id)!, n] as const).sort((a, b) => a[0] - b[0])
      insert.run(month, g.title, g.occupation ?? '', g.postings, encodeCodes(pairs.flat()))
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
 * for the titles and occupations `keep` accepts (the others are not decoded). Run
 * {@link refreshTitleMonths} first in the same transaction, or stale months are read as they were.
 */
export function readTitleMonths(db: Db, since: string | null, keep: (title: string, occupation: string | null) => boolean = () => true): TitleMonth[] {
  const byCode = conceptsByCode(db, null)
  const rows = db
    .prepare('SELECT month, title, occupation, postings, counts FROM title_months WHERE month >= ? ORDER BY month, title, occupation')
    .raw()
    .iterate(since ?? '') as IterableIterator<[string, string, string, number, Buffer]>
  const out: TitleMonth[] = []
  for (const [month, title, occ, postings, blob] of rows) {
    const occupation = occ === '' ? null : occ
    if (!keep(title, occupation)) continue
    const pairs = decodeCodes(blob)
    const counts = new Map<string, number>()
    for (let i = 0; i + 1 < pairs.length; i += 2) counts.set(byCode[pairs[i]!]!, pairs[i + 1]!)
    out.push({ month, title, occupation, postings, counts })
  }
  return out
}
