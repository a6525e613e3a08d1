/**
 * `mention_lists` (src/db/mention-lists.ts), each document's direct concepts as one row of codes,
 * against the mentions it copies: after random sequences of every writer that changes mentions
 * (map and re-map, unmapping, reposts marked later, deletions with heirs, a replaced taxonomy, new
 * concepts, rolled-back transactions), on a second connection's writes, through the real stages,
 * and after migration 7's fill of an older database. The plan's reading of the adjacency window
 * (db/plan.ts readConceptLists) must give the lists, and so the co-occurrence counts, of the query
 * it replaced, which read the mentions (kept here as the reference). The same random writes keep the
 * map's queue (`unmapped_documents`, migration 9) equal to the originals not mapped since, by a model
 * of the writers' rules, and the demand aggregates equal to their recomputation. The plan's kept
 * counts per (month, title, occupation) (db/title-months.ts), refreshed at random points, must equal
 * those counted from the mention rows, and only the months whose postings changed are recomputed.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import fc from 'fast-check'
import { afterAll, describe, expect, it } from 'vitest'
import { loadConfig } from '../../src/config.ts'
import { openDb, schemaVersion, type Db } from '../../src/db/connection.ts'
import { deleteDocuments, markDuplicate } from '../../src/db/documents.ts'
import { decodeCodes, encodeCodes, readMentionLists, rebuildMentionLists } from '../../src/db/mention-lists.ts'
import { readConceptLists } from '../../src/db/plan.ts'
import { refreshTitleMonths, staleTitleMonths } from '../../src/db/title-months.ts'
import { keptTitleRows, referenceTitleRows } from './title-counts-reference.ts'
import { recomputeMonthlyDemand } from '../../src/db/curves.ts'
import { demandInputs } from '../../src/curves/stage.ts'
import { referenceInputs } from '../curves/reference-inputs.ts'
import { insertBroader, insertConcept, markUnmapped, replaceOpenCandidates, replaceTaxonomy, saveMappings, type MentionRow } from '../../src/db/taxonomy.ts'
import { importDocuments } from '../../src/ingest/import.ts'
import { countCoOccurrence, support } from '../../src/plan/adjacency.ts'
import { acceptAsConcept } from '../../src/taxonomy/decisions.ts'
import { mapUnmapped } from '../../src/taxonomy/stage.ts'
import { ensureTaxonomy, importTaxonomy } from '../../src/taxonomy/store.ts'
import type { Concept } from '../../src/taxonomy/types.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-lists-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))

/** The query the plan used before mention_lists: each original's direct mentions, read from `mentions`. */
function referenceLists(db: Db, kind: string, since: string | null, concepts: readonly string[] | null): string[][] {
  const only = concepts ? 'AND +m.concept_id IN (SELECT value FROM json_each(?))' : ''
  const rows = db
    .prepare(
      `SELECT (SELECT json_group_array(m.concept_id) FROM mentions m WHERE m.document_id = d.id AND m.via <> 'rollup' ${only})
       FROM documents d WHERE d.kind = ? AND d.month >= ? AND d.id NOT IN (SELECT id FROM documents WHERE duplicate_of IS NOT NULL)`,
    )
    .pluck()
    .all(...(concepts ? [JSON.stringify(concepts)] : []), kind, since ?? '') as string[]
  return rows.map((r) => JSON.parse(r) as string[])
}

const canonical = (lists: Iterable<readonly string[]>) => [...lists].map((l) => [...l].sort().join(',')).sort()

/** Every document's direct concepts from the mentions table, as mention_lists should hold them. */
function expectMirror(db: Db): void {
  const expected = new Map<number, { kind: string; month: string; concepts: string[] }>()
  const rows = db
    .prepare("SELECT d.id, d.kind, d.month, m.concept_id FROM mentions m JOIN documents d ON d.id = m.document_id WHERE m.via <> 'rollup' ORDER BY d.id, m.concept_id")
    .raw()
    .all() as [number, string, string, string][]
  for (const [id, kind, month, concept] of rows) {
    const e = expected.get(id)
    if (e) e.concepts.push(concept)
    else expected.set(id, { kind, month, concepts: [concept] })
  }
  const stored = readMentionLists(db)
  for (const v of stored.values()) v.concepts.sort()
  expect(new Map([...stored].sort((a, b) => a[0] - b[0]))).toEqual(expected)
}

/** readConceptLists and the co-occurrence counted from it equal the reference query's. */
function expectSameAdjacency(db: Db, since: string | null, focus: readonly string[] | null): void {
  for (const kind of ['posting', 'request'] as const) {
    const lists = [...readConceptLists(db, kind, since, focus)]
    const reference = referenceLists(db, kind, since, focus)
    expect(canonical(lists)).toEqual(canonical(reference))
    const focusSet = focus ? new Set(focus) : undefined
    const a = countCoOccurrence(lists, focusSet)
    const b = countCoOccurrence(reference, focusSet)
    expect(a.documents).toBe(b.documents)
    expect(new Map([...a.counts].sort())).toEqual(new Map([...b.counts].sort()))
    const ids = [...b.counts.keys()].filter((id) => !focusSet || focusSet.has(id))
    for (const x of ids) for (const y of ids) expect(support(a, x, y)).toBe(support(b, x, y))
  }
}

/**
 * The plan's kept counts per (month, title, occupation) (db/title-months.ts), brought up to date,
 * equal those counted here from the mention rows of the mapped original postings; a second
 * refresh finds nothing stale.
 */
function expectSameTitleMonths(db: Db, since: string | null): void {
  db.transaction(() => refreshTitleMonths(db, since))()
  expect(db.transaction(() => refreshTitleMonths(db, since))()).toEqual({ months: 0, rows: 0 })
  expect(keptTitleRows(db, since)).toEqual(referenceTitleRows(db, since))
}

function concept(id: string, broader: string[] = []): Concept {
  return { id, prefLabel: id, altLabels: [], hiddenLabels: [], broader, type: 'hard' }
}
const noFlags = { caseSensitive: () => false }

describe('codes', () => {
  it('round-trip as varints without a zero byte, and refuse what they cannot encode', () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 1, max: 2 ** 28 - 1 }), { maxLength: 40 }), (codes) => {
        const blob = encodeCodes(codes)
        expect(decodeCodes(blob)).toEqual(codes)
        expect(blob.includes(0)).toBe(false)
      }),
    )
    // confirmed by hand: 300 = 0b10_0101100 -> 0xac 0x02
    expect([...encodeCodes([5, 300])]).toEqual([0x05, 0xac, 0x02])
    expect(() => encodeCodes([0])).toThrow(RangeError)
    expect(() => encodeCodes([2 ** 28])).toThrow(RangeError)
  })
})

type Op =
  | { op: 'map'; docs: { doc: number; rows: { concept: number; via: MentionRow['via'] }[] }[] }
  | { op: 'unmap'; docs: number[] }
  | { op: 'repost'; doc: number; of: number }
  | { op: 'delete'; docs: number[] }
  | { op: 'taxonomy'; keep: number[]; add: number }
  | { op: 'concept' }
  | { op: 'rollback'; doc: number }

const VIA = ['text', 'skills'] as const
const MONTHS = ['2024-01', '2024-02', '2024-03', '2024-04', '2024-05']

const opArb: fc.Arbitrary<Op> = fc.oneof(
  {
    weight: 5,
    arbitrary: fc.record({
      op: fc.constant('map' as const),
      docs: fc.array(fc.record({ doc: fc.nat(39), rows: fc.array(fc.record({ concept: fc.nat(30), via: fc.constantFrom(...VIA) }), { maxLength: 6 }) }), { minLength: 1, maxLength: 8 }),
    }),
  },
  { weight: 1, arbitrary: fc.record({ op: fc.constant('unmap' as const), docs: fc.array(fc.nat(39), { maxLength: 4 }) }) },
  { weight: 1, arbitrary: fc.record({ op: fc.constant('repost' as const), doc: fc.nat(39), of: fc.nat(39) }) },
  { weight: 1, arbitrary: fc.record({ op: fc.constant('delete' as const), docs: fc.array(fc.nat(39), { maxLength: 3 }) }) },
  { weight: 1, arbitrary: fc.record({ op: fc.constant('taxonomy' as const), keep: fc.array(fc.nat(30), { maxLength: 10 }), add: fc.nat(3) }) },
  { weight: 1, arbitrary: fc.record({ op: fc.constant('concept' as const)}) },
  { weight: 1, arbitrary: fc.record({ op: fc.constant('rollback' as const), doc: fc.nat(39) }) },
)

describe('mention_lists kept by every writer of mentions', () => {
  it('mirror the direct mentions and give the reference adjacency after random sequences of writes', () => {
    fc.assert(
      fc.property(
        fc.array(opArb, { minLength: 1, maxLength: 25 }),
        fc.constantFrom(null, '2024-02', '2024-04'),
        fc.array(fc.nat(12), { maxLength: 5 }),
        fc.array(fc.constantFrom('before', 'after', 'check', 'no'), { minLength: 1, maxLength: 4 }),
        (ops, since, focusPicks, refreshAt) => {
        const db = openDb(':memory:')
        db.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
        let serial = 0
        const fresh = () => `k${serial++}`
        // a tree of broader links (k1 and k2 under k0, ...): the demand aggregates count each
        // document for its concepts' roll-up too, and must equal the recomputation below
        for (let i = 0; i < 12; i++) {
          const id = fresh()
          insertConcept(db, concept(id), 'import', noFlags)
          if (i > 0) insertBroader(db, id, [`k${(i - 1) >> 1}`])
        }
        const insertDoc = db.prepare(
          "INSERT INTO documents (source_id, external_id, kind, title, body, posted_at, month, text_hash, duplicate_of, occupation) VALUES ('fern', ?, ?, ?, 'text', ?, ?, ?, ?, ?)",
        )
        const ids: number[] = []
        for (let i = 0; i < 40; i++) {
          const month = MONTHS[i % MONTHS.length]!
          // every seventh a repost of the one before (as the import stores them: never mapped)
          const dup = i % 7 === 6 ? ids[i - 1]! : null
          // a few titles and occupations repeated (the plan's counts per month, title and occupation)
          const title = ['Analyst', 'Engineer', 'Data Analyst'][i % 3]!
          const occupation = [null, '', '15-2051', null][i % 4]
          ids.push(Number(insertDoc.run(`d${i}`, i % 5 === 4 ? 'request' : 'posting', title, `${month}-10`, month, `h${i}`, dup, occupation).lastInsertRowid))
        }
        // the originals wait in the map's queue, as the import leaves them
        db.prepare('INSERT INTO unmapped_documents (id) SELECT id FROM documents WHERE duplicate_of IS NULL').run()
        const concepts = () => db.prepare('SELECT id FROM concepts ORDER BY rowid').pluck().all() as string[]
        const exists = (id: number) => db.prepare('SELECT 1 FROM documents WHERE id = ?').get(id) !== undefined
        // the model of the map's queue: the originals mapped since they last became unmapped
        const mapped = new Set<number>()
        const originals = () => new Set(db.prepare('SELECT id FROM documents WHERE duplicate_of IS NULL').pluck().all() as number[])
        const mapIfOriginal = (before: Set<number>, docs: number[]) => {
          for (const d of docs) if (before.has(ids[d]!)) mapped.add(ids[d]!)
        }
        const mapDocs = (docs: { doc: number; rows: { concept: number; via: MentionRow['via'] }[] }[]) => {
          const known = concepts()
          const mappings = new Map<number, MentionRow[]>()
          for (const d of docs) {
            const id = ids[d.doc]!
            if (!exists(id) || known.length === 0) continue
            const rows = new Map<string, MentionRow>()
            for (const r of d.rows) {
              const c = known[r.concept % known.length]!
              rows.set(c, { conceptId: c, count: 1, firstOffset: r.via === 'text' ? 0 : null, via: r.via })
            }
            mappings.set(id, [...rows.values()])
          }
          saveMappings(db, [...mappings].map(([id, rows]) => ({ id, rows })))
        }
        for (const [step, o] of ops.entries()) {
          const before = originals()
          try {
            db.transaction(() => {
              // the plan's kept counts brought up to date now and then, before or after a write
              if (refreshAt[step % refreshAt.length] === 'before') refreshTitleMonths(db, since)
              switch (o.op) {
                case 'map':
                  mapDocs(o.docs)
                  break
                case 'unmap':
                  markUnmapped(db, o.docs.map((d) => ids[d]!))
                  break
                case 'repost':
                  if (exists(ids[o.doc]!) && exists(ids[o.of]!) && o.doc !== o.of) markDuplicate(db, ids[o.doc]!, ids[o.of]!, 0.9)
                  break
                case 'delete':
                  deleteDocuments(db, o.docs.map((d) => ids[d]!))
                  break
                case 'taxonomy': {
                  const known = concepts()
                  const keep = [...new Set(o.keep.map((k) => known[k % Math.max(known.length, 1)]).filter((c): c is string => c !== undefined))]
                  const added = Array.from({ length: o.add }, fresh)
                  const list = [...keep, ...added]
                  replaceTaxonomy(db, list.map((id, j) => concept(id, j > 0 ? [list[(j - 1) >> 1]!] : [])), null, 'test', 'import', noFlags)
                  break
                }
                case 'concept': {
                  // a new concept under the first one, as a curator accepts it
                  const first = concepts()[0]
                  const id = fresh()
                  insertConcept(db, concept(id), 'accepted', noFlags)
                  if (first) insertBroader(db, id, [first])
                  break
                }
                case 'rollback': {
                  // a new concept mapped, then the transaction fails: its code must not survive in
                  // any cache; the same concept is added again afterwards, then another one
                  const id = fresh()
                  const doc = ids[o.doc]!
                  const addAndMap = (c: string, d: number) => {
                    insertConcept(db, concept(c), 'accepted', noFlags)
                    if (exists(d)) saveMappings(db, [{ id: d, rows: [{ conceptId: c, count: 1, firstOffset: 0, via: 'text' }] }])
                  }
                  expect(() =>
                    db.transaction(() => {
                      addAndMap(id, doc)
                      throw new Error('rolled back')
                    })(),
                  ).toThrow(/rolled back/)
                  addAndMap(id, doc)
                  addAndMap(fresh(), ids[(o.doc + 1) % ids.length]!)
                  break
                }
              }
              if (refreshAt[step % refreshAt.length] === 'after') refreshTitleMonths(db, null)
            })()
          } catch (err) {
            if (!/rolled back|cannot be its own original/.test((err as Error).message)) throw err
            continue
          }
          const after = originals()
          if (o.op === 'map' && concepts().length > 0) mapIfOriginal(before, o.docs.map((d) => d.doc))
          if (o.op === 'rollback') mapIfOriginal(before, [o.doc, (o.doc + 1) % ids.length])
          if (o.op === 'unmap') for (const d of o.docs) mapped.delete(ids[d]!)
          if (o.op === 'taxonomy') mapped.clear()
          // reposts are never mapped; a repost that became the original (an heir) waits to be mapped
          for (const id of [...mapped]) if (!after.has(id) || !before.has(id)) mapped.delete(id)
          if (refreshAt[step % refreshAt.length] === 'check') expectSameTitleMonths(db, since)
          const queued = db.prepare('SELECT id FROM unmapped_documents ORDER BY id').pluck().all()
          expect(queued, `the map's queue after ${o.op}`).toEqual([...after].filter((id) => !mapped.has(id)).sort((a, b) => a - b))
        }
        expect(demandInputs(db).inputs).toEqual(referenceInputs(recomputeMonthlyDemand(db)))
        // and a last map with every concept there is now (codes added after the rollbacks)
        mapDocs(ids.map((_, doc) => ({ doc, rows: [{ concept: doc, via: 'text' as const }, { concept: doc + 1, via: 'skills' as const }] })).filter((_, i) => i % 3 === 0))
        expectMirror(db)
        const known = concepts()
        const focus = known.length ? [...new Set(focusPicks.map((k) => known[k % known.length]!))] : []
        expectSameAdjacency(db, since, focus)
        expectSameAdjacency(db, since, null)
        expectSameTitleMonths(db, since)
        // the repair recomputes the same rows
        const before = db.prepare('SELECT * FROM mention_lists ORDER BY kind, month, document_id').all()
        rebuildMentionLists(db)
        expect(db.prepare('SELECT * FROM mention_lists ORDER BY kind, month, document_id').all()).toEqual(before)
        db.close()
        },
      ),
      { numRuns: 60 },
    )
  })

  it('stay right when another connection adds concept codes between two writes of this one', () => {
    const file = path.join(tmp, 'two.db')
    const a = openDb(file)
    const b = openDb(file)
    a.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
    const doc = a.prepare("INSERT INTO documents (source_id, external_id, kind, title, body, posted_at, month, text_hash) VALUES ('fern', ?, 'posting', '', 'x', '2024-01-02', '2024-01', ?)")
    const d = [1, 2, 3].map((i) => Number(doc.run(`d${i}`, `h${i}`).lastInsertRowid))
    insertConcept(a, concept('alpha'), 'import', noFlags)
    a.transaction(() => saveMappings(a, [{ id: d[0]!, rows: [{ conceptId: 'alpha', count: 1, firstOffset: 0, via: 'text' }] }]))()
    // b gives the next code to beta; a then codes gamma (a code after beta's, not beta's)
    insertConcept(b, concept('beta'), 'import', noFlags)
    insertConcept(b, concept('gamma'), 'import', noFlags)
    b.transaction(() => saveMappings(b, [{ id: d[1]!, rows: [{ conceptId: 'beta', count: 1, firstOffset: 0, via: 'text' }] }]))()
    a.transaction(() =>
      saveMappings(a, [{ id: d[2]!, rows: [{ conceptId: 'gamma', count: 1, firstOffset: 0, via: 'text' }, { conceptId: 'beta', count: 1, firstOffset: 0, via: 'skills' }] }]),
    )()
    expectMirror(a)
    expect(canonical(readConceptLists(b, 'posting', null, null))).toEqual(['alpha', 'beta', 'beta,gamma'])
    a.close()
    b.close()
  })
})

const config = loadConfig({ db: ':memory:' })
const WORDS = 'alder birch cedar damson elder fennel gorse hazel ivy juniper kale larch maple nettle oak poplar quince rowan sorrel thyme willow yarrow'.split(' ')
const SKILLS = ['Kubernetes and Terraform on the platform.', 'Python and SQL for reporting.', 'PyTorch models for the forecasting desk.', 'Advanced Excel and stakeholder management.', 'Quillstream orchestration every night.']

function postingsFile(prefix: string, from: number, months: number, perMonth: number): string {
  const rows: object[] = []
  let n = 0
  for (let m = from; m < from + months; m++) {
    for (let i = 0; i < perMonth; i++) {
      const local = Array.from({ length: 14 }, (_, k) => WORDS[(n * 5 + k * 7 + m * 3) % WORDS.length]).join(' ')
      const row = {
        identifier: `${prefix}${n}`,
        title: `Fernhollow role ${prefix}${n}`,
        description: `Depot ${local} number ${prefix}${n}. ${SKILLS[(n + m) % SKILLS.length]} ${SKILLS[(n * 3 + 1) % SKILLS.length]}`,
        datePosted: `2024-${String(m).padStart(2, '0')}-${String(3 + (i % 20)).padStart(2, '0')}`,
      }
      rows.push(row)
      // an exact repost now and then (stored as a duplicate)
      if (n % 9 === 0) rows.push({ ...row, identifier: `${prefix}${n}-again` })
      n++
    }
  }
  const file = path.join(tmp, `${prefix}.jsonl`)
  fs.writeFileSync(file, rows.map((r) => JSON.stringify(r)).join('\n') + '\n')
  return file
}

describe('mention_lists through the real stages', () => {
  it('follow a bulk map on worker threads, an incremental map, an accepted term, a replaced taxonomy, deletions and a repost', async () => {
    const db = openDb(':memory:')
    const check = () => {
      expectMirror(db)
      const focus = ['kubernetes', 'python', 'sql', 'machine-learning', 'quillstream']
      for (const since of [null, '2024-03']) {
        expectSameAdjacency(db, since, focus)
        expectSameAdjacency(db, since, null)
      }
      expectSameTitleMonths(db, null)
    }
    const stale = () => staleTitleMonths(db, null)
    expect((await importDocuments(db, config, 'postings', postingsFile('a', 1, 4, 12), { skipBad: false })).refused).toBe(false)
    await ensureTaxonomy(db, config)
    await mapUnmapped(db, config, () => {}, { threads: 2, threshold: 1, bulkMin: 1, batch: 7, groupDocs: 20 })
    check()
    expect(db.prepare('SELECT COUNT(*) FROM mention_lists').pluck().get()).toBeGreaterThan(40)
    // new postings of months 4 and 5: only those months' kept counts are recomputed
    expect((await importDocuments(db, config, 'postings', postingsFile('b', 4, 2, 10), { skipBad: false })).refused).toBe(false)
    expect(stale()).toEqual([])
    await mapUnmapped(db, config, () => {}, { threads: 1 })
    expect(stale()).toEqual(['2024-04', '2024-05'])
    check()
    replaceOpenCandidates(db, [{ term: 'quillstream', score: 40, recentDf: 5, earlierDf: 0, trend: [], examples: [] }])
    expect(acceptAsConcept(db, 'quillstream', { label: 'Quillstream', type: 'hard' }, 'curator').affected).toBeGreaterThan(0)
    check()
    await mapUnmapped(db, config, () => {}, { threads: 1 })
    check()
    expect(referenceLists(db, 'posting', null, ['quillstream']).some((l) => l.length > 0)).toBe(true)

    const file = path.join(tmp, 'mini.csv')
    fs.writeFileSync(file, ['id,prefLabel,altLabel,hiddenLabel,broader,type', 'kubernetes,Kubernetes,K8s,,containers,hard', 'containers,containers,,,,hard', 'python,Python,,,,hard'].join('\n'))
    expect((await importTaxonomy(db, file, { skipBad: false })).refused).toBe(false)
    expect(db.prepare('SELECT COUNT(*) FROM mention_lists').pluck().get()).toBe(0)
    // a replaced taxonomy: every month is stale
    expect(stale()).toEqual(['2024-01', '2024-02', '2024-03', '2024-04', '2024-05'])
    await mapUnmapped(db, config, () => {}, { threads: 1 })
    check()

    const idOf = (external: string) => db.prepare('SELECT id FROM documents WHERE external_id = ?').pluck().get(external) as number
    // a0 has a repost (its heir), a1 none
    db.transaction(() => deleteDocuments(db, [idOf('a0'), idOf('a1')]))()
    check()
    db.transaction(() => markDuplicate(db, idOf('a2'), idOf('a3'), 0.95))()
    const month = db.prepare('SELECT month FROM documents WHERE id = ?').pluck()
    expect(stale()).toEqual([month.get(idOf('a2'))])
    check()
    await mapUnmapped(db, config, () => {}, { threads: 1 })
    check()
  }, 60_000)
})

describe('migration 7', () => {
  it('fills mention_lists from the mentions of a version-6 database, and its trigger follows deleted documents', () => {
    const file = path.join(tmp, 'v6.db')
    const v6 = openDb(file, { upTo: 6 })
    v6.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
    for (const id of ['zeta', 'alpha', 'mu', 'omega']) v6.prepare("INSERT INTO concepts (id, pref_label, type) VALUES (?, ?, 'hard')").run(id, id)
    const doc = v6.prepare("INSERT INTO documents (source_id, external_id, kind, title, body, posted_at, month, text_hash, duplicate_of) VALUES ('fern', ?, ?, '', 'x', ?, ?, ?, ?)")
    const mention = v6.prepare('INSERT INTO mentions (document_id, concept_id, count, via) VALUES (?, ?, 1, ?)')
    const a = Number(doc.run('a', 'posting', '2024-02-01', '2024-02', 'ha', null).lastInsertRowid)
    const b = Number(doc.run('b', 'request', '2024-01-01', '2024-01', 'hb', null).lastInsertRowid)
    const c = Number(doc.run('c', 'posting', '2024-03-01', '2024-03', 'hc', null).lastInsertRowid)
    doc.run('d', 'posting', '2024-03-01', '2024-03', 'hd', c)
    for (const [d, id, via] of [[a, 'zeta', 'text'], [a, 'alpha', 'skills'], [a, 'omega', 'rollup'], [b, 'mu', 'text'], [c, 'omega', 'rollup']] as const) mention.run(d, id, via)
    v6.close()

    const db = openDb(file)
    expect(schemaVersion(db)).toBeGreaterThanOrEqual(7)
    expectMirror(db)
    // c has roll-ups only: no row
    expect(db.prepare('SELECT document_id FROM mention_lists ORDER BY document_id').pluck().all()).toEqual([a, b])
    // concepts are coded in id order
    expect(db.prepare('SELECT concept_id FROM concept_codes ORDER BY code').pluck().all()).toEqual(['alpha', 'mu', 'omega', 'zeta'])
    expectSameAdjacency(db, null, ['alpha', 'zeta', 'mu'])
    // the same rows as the repair's recomputation
    const filled = db.prepare('SELECT * FROM mention_lists ORDER BY kind, month, document_id').all()
    rebuildMentionLists(db)
    expect(db.prepare('SELECT * FROM mention_lists ORDER BY kind, month, document_id').all()).toEqual(filled)
    // a document deleted by any writer takes its row along (its mentions go by the cascade)
    db.prepare('DELETE FROM documents WHERE id = ?').run(a)
    expectMirror(db)
    expect(db.prepare('SELECT document_id FROM mention_lists').pluck().all()).toEqual([b])
    db.close()
  })
})
