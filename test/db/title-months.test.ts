/**
 * The plan's kept counts per (month, title, occupation) (src/db/title-months.ts): migration 13 on a
 * version-12 database, the window a refresh covers, and what `keep` leaves out. Their agreement with
 * the mentions after random writes is checked in mention-lists.test.ts, with the other copies of
 * the mentions.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { openDb, schemaVersion, type Db } from '../../src/db/connection.ts'
import { SCHEMA_VERSION } from '../../src/db/migrations.ts'
import { rebuildMentionLists } from '../../src/db/mention-lists.ts'
import { readTitleMonths, refreshTitleMonths, staleTitleMonths } from '../../src/db/title-months.ts'
import { referenceTitleRows, titleRows } from './title-counts-reference.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-titles-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))

/** Postings of three months written by SQL at schema `upTo`, all mapped, with the demand totals a v12 map kept. */
function corpus(db: Db): void {
  db.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
  for (const id of ['excel', 'python', 'sql']) db.prepare("INSERT INTO concepts (id, pref_label, type) VALUES (?, ?, 'hard')").run(id, id)
  const doc = db.prepare("INSERT INTO documents (source_id, external_id, kind, title, body, posted_at, month, text_hash, occupation, duplicate_of) VALUES ('fern', ?, ?, ?, 'x', ?, ?, ?, ?, ?)")
  const mention = db.prepare('INSERT INTO mentions (document_id, concept_id, count, via) VALUES (?, ?, 1, ?)')
  let n = 0
  const add = (month: string, title: string, occupation: string | null, concepts: [string, string][], kind = 'posting', duplicateOf: number | null = null) => {
    const id = Number(doc.run(`d${n}`, kind, title, `${month}-05`, month, `h${n++}`, occupation, duplicateOf).lastInsertRowid)
    for (const [c, via] of concepts) mention.run(id, c, via)
    return id
  }
  const a = add('2024-01', 'Data Analyst', null, [['sql', 'text'], ['python', 'skills']])
  add('2024-01', 'Data Analyst', null, [['sql', 'text'], ['excel', 'rollup']])
  add('2024-01', 'Data Analyst', null, [['sql', 'text']], 'posting', a) // a repost: not counted
  add('2024-02', 'Data Analyst', '15-2051', [['excel', 'text']])
  add('2024-02', 'Data Analyst', '', [])
  add('2024-02', 'Data Analyst', null, [['python', 'text']])
  add('2024-03', 'Platform Engineer', null, [['python', 'text']])
  add('2024-03', 'Platform Engineer', null, [['python', 'text']], 'request')
  db.prepare('DELETE FROM unmapped_documents').run()
  rebuildMentionLists(db)
  db.prepare(
    `INSERT INTO demand_totals (series, month, total)
     SELECT CASE kind WHEN 'posting' THEN 'external' ELSE 'internal' END, month, COUNT(*) FROM documents WHERE duplicate_of IS NULL GROUP BY kind, month`,
  ).run()
}

describe('kept counts per month, title and occupation', () => {
  it('migration 13 gives every month with counted documents a version; the first refresh computes them, the next nothing', () => {
    const file = path.join(tmp, 'v12.db')
    const old = openDb(file, { upTo: 12 })
    corpus(old)
    old.close()
    const db = openDb(file)
    expect(schemaVersion(db)).toBe(SCHEMA_VERSION)
    expect(db.prepare('SELECT kind, month, version FROM month_versions ORDER BY kind, month').raw().all()).toEqual([
      ['posting', '2024-01', 1],
      ['posting', '2024-02', 1],
      ['posting', '2024-03', 1],
      ['request', '2024-03', 1],
    ])
    expect(staleTitleMonths(db, null)).toEqual(['2024-01', '2024-02', '2024-03'])
    expect(db.transaction(() => refreshTitleMonths(db, null))()).toEqual({ months: 3, rows: 4 })
    expect(db.transaction(() => refreshTitleMonths(db, null))()).toEqual({ months: 0, rows: 0 })
    const kept = readTitleMonths(db, null)
    // worked by hand from corpus(): the repost and the request left out, '' and no occupation alike,
    // a roll-up not counted, a posting without concepts counted among the postings
    expect(titleRows(kept)).toEqual([
      ['2024-01', 'Data Analyst', null, 2, { python: 1, sql: 2 }],
      ['2024-02', 'Data Analyst', null, 2, { python: 1 }],
      ['2024-02', 'Data Analyst', '15-2051', 1, { excel: 1 }],
      ['2024-03', 'Platform Engineer', null, 1, { python: 1 }],
    ])
    expect(titleRows(kept)).toEqual(referenceTitleRows(db, null))
    db.close()
  })

  it('a refresh covers the months from `since` on; `keep` leaves titles out unread', () => {
    const file = path.join(tmp, 'since.db')
    const old = openDb(file, { upTo: 12 })
    corpus(old)
    old.close()
    const fresh = openDb(file)
    expect(fresh.transaction(() => refreshTitleMonths(fresh, '2024-02'))()).toEqual({ months: 2, rows: 3 })
    expect(staleTitleMonths(fresh, null)).toEqual(['2024-01'])
    expect(readTitleMonths(fresh, null).rows.map((t) => t.month)).toEqual(['2024-02', '2024-02', '2024-03'])
    const asked: [string, string | null][] = []
    const kept = readTitleMonths(fresh, '2024-02', (title, occupation) => {
      asked.push([title, occupation])
      return occupation !== null
    })
    expect(asked).toEqual([['Data Analyst', null], ['Data Analyst', '15-2051'], ['Platform Engineer', null]])
    expect(kept.rows.map((t) => t.occupation)).toEqual(['15-2051'])
    expect(titleRows(kept)).toEqual([['2024-02', 'Data Analyst', '15-2051', 1, { excel: 1 }]])
    fresh.close()
  })
})
