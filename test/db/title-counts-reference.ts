/**
 * Independent references for the plan's kept counts per (month, title, occupation)
 * (src/db/title-months.ts): the counts summed here from documents in memory, and from the mention
 * rows of the database (not from `mention_lists`, which the kept counts are computed from).
 */
import type { Db } from '../../src/db/connection.ts'
import { countsById, readTitleMonths, type TitleCounts } from '../../src/db/title-months.ts'

/** A posting as the role suggestions see it: its month, title, occupation and directly mentioned concepts. */
export interface PostingConcepts {
  month: string
  title: string
  occupation: string | null
  concepts: string[]
}

/** Postings summed per (month, title, occupation), in that order (null occupation as ''); concept indices in id order. */
export function countTitles(docs: Iterable<PostingConcepts>): TitleCounts {
  const groups = new Map<string, { month: string; title: string; occupation: string | null; postings: number; counts: Map<string, number> }>()
  for (const doc of docs) {
    const occupation = doc.occupation ?? ''
    const key = JSON.stringify([doc.month, doc.title, occupation])
    let g = groups.get(key)
    if (!g) groups.set(key, (g = { month: doc.month, title: doc.title, occupation: occupation === '' ? null : occupation, postings: 0, counts: new Map() }))
    g.postings++
    for (const c of new Set(doc.concepts)) g.counts.set(c, (g.counts.get(c) ?? 0) + 1)
  }
  const order = (a: string, b: string) => (a < b ? -1 : a > b ? 1 : 0)
  const sorted = [...groups.values()].sort((a, b) => order(a.month, b.month) || order(a.title, b.title) || order(a.occupation ?? '', b.occupation ?? ''))
  const concepts = [...new Set(sorted.flatMap((g) => [...g.counts.keys()]))].sort(order)
  const index = new Map(concepts.map((id, i) => [id, i]))
  const rows = sorted.map(({ counts, ...g }) => {
    const pairs = [...counts].map(([id, n]) => [index.get(id)!, n] as const).sort((x, y) => x[0] - y[0])
    return { ...g, concepts: Uint32Array.from(pairs, (p) => p[0]), mentions: Uint32Array.from(pairs, (p) => p[1]) }
  })
  return { concepts, rows }
}

/** A row as [month, title, occupation, postings, {concept id: postings mentioning it}]. */
export type TitleRow = [string, string, string | null, number, Record<string, number>]

/** Counts as comparable rows. */
export function titleRows(counts: TitleCounts): TitleRow[] {
  return counts.rows.map((t) => [t.month, t.title, t.occupation, t.postings, Object.fromEntries([...countsById(counts, t)].sort())])
}

/** The kept counts from `since` on, as rows (as they are: no refresh). */
export function keptTitleRows(db: Db, since: string | null): TitleRow[] {
  return titleRows(readTitleMonths(db, since))
}

/** The counts from `since` on summed from the mention rows (direct, not roll-ups) of the mapped original postings. */
export function referenceTitleRows(db: Db, since: string | null): TitleRow[] {
  const rows = db
    .prepare(
      `SELECT d.id, d.month, d.title, d.occupation,
              (SELECT json_group_array(m.concept_id) FROM mentions m WHERE m.document_id = d.id AND m.via <> 'rollup') AS concepts
       FROM documents d
       WHERE d.kind = 'posting' AND d.duplicate_of IS NULL AND d.month >= ? AND d.id NOT IN (SELECT id FROM unmapped_documents)`,
    )
    .all(since ?? '') as { month: string; title: string; occupation: string | null; concepts: string }[]
  return titleRows(countTitles(rows.map((r) => ({ ...r, concepts: JSON.parse(r.concepts) as string[] }))))
}
