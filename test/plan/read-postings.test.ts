/**
 * The two readings of the postings window the plan makes: the concept lists adjacency is counted
 * from (db/plan.ts; every concept, or only the listed ones), and the kept counts per (month, title,
 * occupation) the role suggestions read (db/title-months.ts). Both leave out reposts and roll-ups.
 */
import { describe, it, expect } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { rebuildDemandCounts } from '../../src/db/curves.ts'
import { readConceptLists as readLists } from '../../src/db/plan.ts'
import { rebuildMentionLists } from '../../src/db/mention-lists.ts'
import { refreshTitleMonths } from '../../src/db/title-months.ts'
import { keptTitleRows, referenceTitleRows } from '../db/title-counts-reference.ts'
import type { Db } from '../../src/db/connection.ts'

const readConceptLists = (db: Db, kind: 'posting' | 'request', since: string | null, concepts: string[] | null) => [...readLists(db, kind, since, concepts)].map((l) => [...l].sort())

function corpus() {
  const db = openDb(':memory:')
  db.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
  for (const id of ['data', 'python', 'sql', 'excel']) db.prepare("INSERT INTO concepts (id, pref_label, type) VALUES (?, ?, 'hard')").run(id, id)
  const doc = db.prepare(
    "INSERT INTO documents (source_id, external_id, kind, title, body, posted_at, month, text_hash, duplicate_of) VALUES ('fern', ?, ?, ?, 'text', ?, ?, ?, ?)",
  )
  const mention = db.prepare('INSERT INTO mentions (document_id, concept_id, count, first_offset, via) VALUES (?, ?, 1, 0, ?)')
  let serial = 0
  const add = (kind: string, month: string, concepts: [string, string][], duplicateOf: number | null = null) => {
    const id = Number(doc.run(`d${serial}`, kind, `Role ${serial}`, `${month}-03`, month, `h${serial++}`, duplicateOf).lastInsertRowid)
    for (const [concept, via] of concepts) mention.run(id, concept, via)
    return id
  }
  add('posting', '2023-12', [['python', 'text']]) // before the window
  // data is broader than python: a roll-up, counted in demand, never a direct concept (db/ancestry.ts)
  db.prepare("INSERT INTO concept_broader (concept_id, broader_id) VALUES ('python', 'data')").run()
  const a = add('posting', '2024-01', [['python', 'text'], ['sql', 'text']])
  add('posting', '2024-01', [['python', 'text']], a) // a repost of a
  add('posting', '2024-02', [['excel', 'text']])
  add('posting', '2024-03', []) // mapped, no skill
  add('request', '2024-02', [['sql', 'text']]) // another kind
  add('posting', '2024-03', [['sql', 'skills'], ['python', 'text']])
  db.prepare('DELETE FROM unmapped_documents').run() // all mapped
  rebuildMentionLists(db)
  return db
}

describe('reading the postings window for the plan', () => {
  it('gives every original posting of the window its direct concepts, as concept lists and as kept counts per title', () => {
    const db = corpus()
    // worked by hand from corpus(): no repost, no roll-up, no request; the posting without skills counts
    expect(readConceptLists(db, 'posting', '2024-01', null).sort()).toEqual([['excel'], ['python', 'sql'], ['python', 'sql'], []].sort())
    // only the listed concepts; documents without any of them stay, empty (they count as documents)
    expect(readConceptLists(db, 'posting', '2024-01', ['sql', 'data']).sort()).toEqual([['sql'], ['sql'], [], []].sort())
    expect(readConceptLists(db, 'posting', null, ['python'])).toHaveLength(5)
    expect(readConceptLists(db, 'request', null, null)).toEqual([['sql']])

    rebuildDemandCounts(db) // the month versions the kept counts follow
    db.transaction(() => refreshTitleMonths(db, '2024-01'))()
    expect(keptTitleRows(db, '2024-01')).toEqual([
      ['2024-01', 'Role 1', null, 1, { python: 1, sql: 1 }],
      ['2024-02', 'Role 3', null, 1, { excel: 1 }],
      ['2024-03', 'Role 4', null, 1, {}],
      ['2024-03', 'Role 6', null, 1, { python: 1, sql: 1 }],
    ])
    expect(keptTitleRows(db, '2024-01')).toEqual(referenceTitleRows(db, '2024-01'))
  })
})
