/**
 * The roll-up of mentions derived from the broader links (src/db/ancestry.ts, migration 14): the
 * JavaScript closure, the two SQL closures and the matcher's own roll-up must agree on any taxonomy
 * without cycles; a database whose mentions table held roll-up rows is upgraded to direct rows only
 * with its demand unchanged; and the dashboard's readers by concept find a broader skill's postings
 * through the skills below it.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import fc from 'fast-check'
import { afterAll, describe, expect, it } from 'vitest'
import { Ancestry, CONCEPTS_UNDER, ROLL_UP } from '../../src/db/ancestry.ts'
import { openDb, schemaVersion, type Db } from '../../src/db/connection.ts'
import { recomputeMonthlyDemand, rebuildDemandCounts } from '../../src/db/curves.ts'
import { coMentioned, examplePostings, latestPostingsWay } from '../../src/db/dashboard.ts'
import { SCHEMA_VERSION } from '../../src/db/migrations.ts'
import { replaceTaxonomy, saveMappings } from '../../src/db/taxonomy.ts'
import { Matcher } from '../../src/taxonomy/matcher.ts'
import type { Concept } from '../../src/taxonomy/types.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-ancestry-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))

const noFlags = { caseSensitive: () => false }
/** Labels the matcher finds as they are: letters only, none a word of the lexicon. */
const label = (i: number) => `zq${String.fromCharCode(97 + (i % 26))}${String.fromCharCode(97 + Math.floor(i / 26))}x`
const concept = (id: string, prefLabel: string, broader: string[] = []): Concept => ({ id, prefLabel, altLabels: [], hiddenLabels: [], broader, type: 'hard' })

/** A taxonomy stored with replaceTaxonomy (broader links included), in a fresh database. */
function stored(concepts: Concept[]): Db {
  const db = openDb(':memory:')
  db.transaction(() => replaceTaxonomy(db, concepts, null, 'test', 'import', noFlags))()
  return db
}

const sorted = (xs: Iterable<string>) => [...xs].sort()

describe('the roll-up closure', () => {
  it('follows broader links transitively, each concept once, on a hand-drawn hierarchy', () => {
    // sql -> databases -> data-skills; sql -> querying -> data-skills (a diamond); a second root
    const a = Ancestry.fromLinks([
      ['sql', 'databases'],
      ['sql', 'querying'],
      ['databases', 'data-skills'],
      ['querying', 'data-skills'],
      ['excel', 'office-tools'],
    ])
    expect(sorted(a.broaderOf('sql'))).toEqual(['data-skills', 'databases', 'querying'])
    expect(a.broaderOf('data-skills')).toEqual([])
    expect(a.broaderOf('unknown')).toEqual([])
    expect(sorted(a.rollUp(['sql', 'excel']))).toEqual(['data-skills', 'databases', 'excel', 'office-tools', 'querying', 'sql'])
    // a direct mention of a broader concept is counted once, not again by roll-up
    expect(a.rollUp(['sql', 'databases']).filter((c) => c === 'databases')).toHaveLength(1)
  })

  it('stops at a cycle made by hand (the validator refuses them) in JavaScript and in SQL', () => {
    const a = Ancestry.fromLinks([
      ['a', 'b'],
      ['b', 'c'],
      ['c', 'a'],
    ])
    expect(sorted(a.rollUp(['a']))).toEqual(['a', 'b', 'c'])
    const db = stored([concept('a', 'zqaax'), concept('b', 'zqbax'), concept('c', 'zqcax')])
    db.prepare("INSERT INTO concept_broader (concept_id, broader_id) VALUES ('a', 'b'), ('b', 'c'), ('c', 'a')").run()
    expect(sorted(db.prepare(`${ROLL_UP} SELECT counted_id FROM roll_up WHERE concept_id = 'a'`).pluck().all() as string[])).toEqual(['a', 'b', 'c'])
    expect(sorted(db.prepare(`${CONCEPTS_UNDER} SELECT id FROM under`).pluck().all('a') as string[])).toEqual(['a', 'b', 'c'])
    db.close()
  })

  it('is the same in JavaScript, in both SQL walks and in the matcher, on random taxonomies without cycles', () => {
    // each concept's broader concepts are drawn among the concepts before it: no cycle
    const taxonomyArb = fc
      .integer({ min: 1, max: 30 })
      .chain((n) => fc.tuple(fc.constant(n), fc.array(fc.uniqueArray(fc.nat(n), { maxLength: 3 }), { minLength: n, maxLength: n }), fc.uniqueArray(fc.nat(n - 1), { maxLength: 8 })))
    fc.assert(
      fc.property(taxonomyArb, ([n, parents, mentioned]) => {
        const ids = Array.from({ length: n }, (_, i) => `c${i}`)
        const concepts = ids.map((id, i) => concept(id, label(i), parents[i]!.filter((p) => p < i).map((p) => ids[p]!)))
        const db = stored(concepts)
        const ancestry = Ancestry.of(db)
        const rollUpRows = db.prepare(`${ROLL_UP} SELECT concept_id, counted_id FROM roll_up`).raw().all() as [string, string][]
        for (const id of ids) {
          const sql = rollUpRows.filter(([c]) => c === id).map(([, up]) => up)
          expect(sorted(ancestry.rollUp([id])), `roll-up of ${id}`).toEqual(sorted(sql))
          const under = db.prepare(`${CONCEPTS_UNDER} SELECT id FROM under`).pluck().all(id) as string[]
          expect(sorted(under), `concepts under ${id}`).toEqual(sorted(ids.filter((c) => ancestry.rollUp([c]).includes(id))))
        }
        // the matcher rolls a document up to the same concepts (taxonomy/matcher-build.ts)
        const matcher = Matcher.build({ concepts, byId: new Map(concepts.map((c) => [c.id, c])) })
        const direct = mentioned.map((i) => ids[i]!)
        const text = direct.map((id) => label(Number(id.slice(1)))).join(', ')
        const mapping = matcher.mapText(text)
        expect(sorted(mapping.mentions.map((m) => m.conceptId))).toEqual(sorted(direct))
        expect(sorted(mapping.rollups.map((r) => r.conceptId))).toEqual(sorted(ancestry.rollUp(direct).filter((c) => !direct.includes(c))))
        // as the map stage asks for it: the same mentions, no roll-up list
        const bare = matcher.mapText(text, { rollups: false })
        expect(bare.mentions).toEqual(mapping.mentions)
        expect(bare.rollups).toEqual([])
        db.close()
      }),
      { numRuns: 80, seed: 20261203 },
    )
  })
})

/** Documents with direct mentions (and the roll-up rows the map stored before migration 14). */
function fillDocuments(db: Db, withRollUpRows: boolean): void {
  db.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
  const doc = db.prepare(
    "INSERT INTO documents (source_id, external_id, kind, title, body, posted_at, month, text_hash, duplicate_of) VALUES ('fern', ?, ?, ?, 'text', ?, ?, ?, ?)",
  )
  const mention = db.prepare('INSERT INTO mentions (document_id, concept_id, count, first_offset, via) VALUES (?, ?, ?, ?, ?)')
  const ancestry = Ancestry.of(db)
  // [kind, month, direct concepts]; the third is a repost of the second
  const docs: [string, string, string[]][] = [
    ['posting', '2024-01', ['sql', 'excel']],
    ['posting', '2024-01', ['databases']],
    ['posting', '2024-01', ['sql']],
    ['posting', '2024-02', ['sql', 'databases']],
    ['request', '2024-02', ['excel']],
    ['posting', '2024-02', []],
  ]
  let original = 0
  for (const [i, [kind, month, direct]] of docs.entries()) {
    const id = Number(doc.run(`d${i}`, kind, `Role ${i}`, `${month}-0${i + 1}`, month, `h${i}`, i === 2 ? original : null).lastInsertRowid)
    if (i === 1) original = id
    for (const c of direct) mention.run(id, c, 1, 0, 'text')
    if (withRollUpRows) for (const c of ancestry.rollUp(direct)) if (!direct.includes(c)) mention.run(id, c, 1, null, 'rollup')
  }
}

const hierarchy = [
  concept('data-skills', 'zqdsx'),
  concept('databases', 'zqdbx', ['data-skills']),
  concept('sql', 'zqsqx', ['databases']),
  concept('excel', 'zqexx', ['office-tools']),
  concept('office-tools', 'zqotx'),
]

describe('migration 14', () => {
  it('keeps the direct mentions only, and the demand counted from them with the links is the demand counted before', () => {
    const file = path.join(tmp, 'v13.db')
    const old = openDb(file, { upTo: 13 })
    old.transaction(() => replaceTaxonomy(old, hierarchy, null, 'test', 'import', noFlags))()
    fillDocuments(old, true)
    old.prepare('DELETE FROM unmapped_documents').run()
    // the demand as the old schema counted it: one row per stored mention, roll-ups included
    const before = old
      .prepare(
        `SELECT m.concept_id, d.kind, d.month, COUNT(*) AS n FROM mentions m JOIN documents d ON d.id = m.document_id
         WHERE d.duplicate_of IS NULL GROUP BY m.concept_id, d.kind, d.month ORDER BY 1, 2, 3`,
      )
      .raw()
      .all()
    const direct = old.prepare("SELECT * FROM mentions WHERE via <> 'rollup' ORDER BY document_id, concept_id").all()
    // by hand: 3 for the first posting, 1, 2 for the repost, 1, 1 for the request
    expect(old.prepare("SELECT COUNT(*) FROM mentions WHERE via = 'rollup'").pluck().get()).toBe(8)
    old.close()

    const db = openDb(file)
    expect(schemaVersion(db)).toBe(SCHEMA_VERSION)
    expect(db.prepare('SELECT * FROM mentions ORDER BY document_id, concept_id').all()).toEqual(direct)
    const after = recomputeMonthlyDemand(db)
    const counted: [string, string, string, number][] = []
    for (const [id, series] of after.mentions) {
      for (const [kind, months] of [['posting', series.external], ['request', series.internal]] as const) for (const [month, n] of months) counted.push([id, kind, month, n])
    }
    expect(counted.sort((a, b) => a.join().localeCompare(b.join()))).toEqual(before)
    // worked by hand: data-skills in January by the first posting's sql and the second's databases
    expect(after.mentions.get('data-skills')!.external.get('2024-01')).toBe(2)
    expect(after.mentions.get('office-tools')!.internal.get('2024-02')).toBe(1)
    // the concept index is there; a roll-up row cannot be stored any more
    expect(db.prepare("SELECT COUNT(*) FROM sqlite_master WHERE type = 'index' AND name IN ('mentions_concept', 'concept_broader_broader')").pluck().get()).toBe(2)
    expect(() => db.prepare("INSERT INTO mentions (document_id, concept_id, count, first_offset, via) VALUES (1, 'data-skills', 1, NULL, 'rollup')").run()).toThrow(/CHECK constraint/)
    db.close()
  })
})

describe('a broader skill on the dashboard', () => {
  it('shows the postings of the skills below it, each once, and their direct skills as neighbours', () => {
    const db = stored(hierarchy)
    fillDocuments(db, false)
    const rows = db.prepare("SELECT id, kind, duplicate_of FROM documents ORDER BY id").all() as { id: number; kind: string; duplicate_of: number | null }[]
    db.transaction(() => {
      db.prepare('DELETE FROM unmapped_documents').run()
      rebuildDemandCounts(db)
    })()
    // data-skills is never named: its postings are the originals naming sql or databases, newest first
    const ids = rows.map((r) => r.id)
    expect(examplePostings(db, 'data-skills', 10).map((p) => p.id)).toEqual([ids[3], ids[1], ids[0]])
    expect(examplePostings(db, 'sql', 10).map((p) => p.id)).toEqual([ids[3], ids[0]])
    expect(examplePostings(db, 'office-tools', 10).map((p) => p.id)).toEqual([ids[0]]) // the request is not a posting
    // neighbours: the direct skills of those postings other than the skill itself
    expect(coMentioned(db, 'data-skills').map((r) => [r.id, r.together, r.base])).toEqual([
      ['databases', 2, 3],
      ['sql', 2, 3],
      ['excel', 1, 3],
    ])
    // both ways of reading a skill's latest postings give the same rows, from every first month
    // that the demand counts choose (worked by hand: data-skills is in 2 of January's 2 originals and
    // 1 of February's 2, so its one latest posting is read from February's postings)
    expect(latestPostingsWay(db, 'data-skills', 1)).toEqual({ since: '2024-02', way: 'by-month' })
    expect(latestPostingsWay(db, 'data-skills', 3)).toEqual({ since: '2024-01', way: 'by-skill' })
    expect(latestPostingsWay(db, 'data-skills', 4)).toEqual({ since: '', way: 'by-skill' })
    for (const c of hierarchy.map((h) => h.id)) {
      for (const want of [1, 2, 3, 5]) {
        const every = { since: '', way: 'by-skill' } as const
        const chosen = latestPostingsWay(db, c, want)
        const posts = examplePostings(db, c, want, every)
        const neighbours = coMentioned(db, c, 10, want, every)
        for (const way of ['by-skill', 'by-month'] as const) {
          expect(examplePostings(db, c, want, { since: chosen.since, way }), `${c} ${want} ${way}`).toEqual(posts)
          expect(coMentioned(db, c, 10, want, { since: chosen.since, way }), `${c} ${want} ${way}`).toEqual(neighbours)
        }
      }
    }
    // saveMappings counts a re-mapped posting's roll-up, and takes the old one out
    db.transaction(() => saveMappings(db, [{ id: ids[0]!, rows: [{ conceptId: 'excel', count: 1, firstOffset: 0, via: 'text' }] }]))()
    const demand = recomputeMonthlyDemand(db)
    expect(demand.mentions.get('data-skills')!.external.get('2024-01')).toBe(1)
    expect(db.prepare('SELECT n FROM demand_counts WHERE concept_id = ? AND series = ? AND month = ?').pluck().get('data-skills', 'external', '2024-01')).toBe(1)
    db.close()
  })
})
