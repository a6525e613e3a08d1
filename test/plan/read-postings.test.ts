/**
 * The two readings of the postings window the plan makes (db/plan.ts): the mapped documents with
 * their concepts (what the role suggestions' kept counts are computed from), and the concept lists adjacency is counted from (every concept, or
 * only the listed ones). Both leave out reposts and roll-ups and agree with each other.
 */
import { describe, it, expect } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { readConceptLists as readLists, readDocumentConcepts } from '../../src/db/plan.ts'
import { rebuildMentionLists } from '../../src/db/mention-lists.ts'
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
  const a = add('posting', '2024-01', [['python', 'text'], ['sql', 'text'], ['data', 'rollup']])
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
  it('gives every original posting of the window, its direct concepts in id order, and the same lists both ways', () => {
    const db = corpus()
    const docs = readDocumentConcepts(db, 'posting', { since: '2024-01' })
    expect(docs.map((d) => [d.month, d.concepts])).toEqual([
      ['2024-01', ['python', 'sql']],
      ['2024-02', ['excel']],
      ['2024-03', []],
      ['2024-03', ['python', 'sql']],
    ])
    expect(readConceptLists(db, 'posting', '2024-01', null).sort()).toEqual(docs.map((d) => d.concepts).sort())
    // only the listed concepts; documents without any of them stay, empty (they count as documents)
    expect(readConceptLists(db, 'posting', '2024-01', ['sql', 'data']).sort()).toEqual([['sql'], ['sql'], [], []].sort())
    expect(readConceptLists(db, 'posting', null, ['python'])).toHaveLength(5)
    expect(readConceptLists(db, 'request', null, null)).toEqual([['sql']])
    // a month range; a posting waiting to be mapped (again) does not count
    expect(readDocumentConcepts(db, 'posting', { since: '2024-02', until: '2024-02' }).map((d) => d.concepts)).toEqual([['excel']])
    db.prepare('INSERT INTO unmapped_documents (id) VALUES (?)').run(docs[1]!.id)
    expect(readDocumentConcepts(db, 'posting', { since: '2024-01' }).map((d) => d.id)).toEqual([docs[0]!.id, docs[2]!.id, docs[3]!.id])
  })

  it('reads the same documents and lists as the direct mention rows give (the query it replaced), and skips what `keep` leaves out', () => {
    const db = corpus()
    const fromMentions = db
      .prepare(
        `SELECT d.id, d.month, d.title, d.occupation,
                (SELECT json_group_array(m.concept_id) FROM mentions m WHERE m.document_id = d.id AND m.via <> 'rollup') AS concepts
         FROM documents d WHERE d.kind = 'posting' AND d.duplicate_of IS NULL AND d.month >= '' ORDER BY d.id`,
      )
      .all() as { id: number; month: string; title: string; occupation: string | null; concepts: string }[]
    expect(readDocumentConcepts(db, 'posting')).toEqual(fromMentions.map((r) => ({ ...r, concepts: JSON.parse(r.concepts) as string[] })))
    const asked: string[] = []
    const kept = readDocumentConcepts(db, 'posting', { since: '2024-01', keep: (title) => {
      asked.push(title)
      return title !== 'Role 1'
    } })
    expect(asked).toEqual(['Role 1', 'Role 3', 'Role 4', 'Role 6'])
    expect(kept.map((d) => d.title)).toEqual(['Role 3', 'Role 4', 'Role 6'])
  })
})
