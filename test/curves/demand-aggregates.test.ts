/**
 * The running demand aggregates (demand_counts, demand_totals) against their full recomputation from
 * documents and mentions, on corpora built through the real stages (import, then map), and after
 * every change that moves a document in or out of the counts: a second import, accepting a
 * candidate term (re-map of the affected documents), replacing the taxonomy, deleting documents
 * (an original with reposts) and importing them again, and marking a mapped document a repost.
 * Also the upgrade of a version-2 database (migration 3 fills the aggregates from stored mentions).
 */
import { describe, it, expect, afterAll } from 'vitest'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import Database from 'better-sqlite3'
import { loadConfig } from '../../src/config.ts'
import { CONCEPTS_UNDER } from '../../src/db/ancestry.ts'
import { openDb, schemaVersion, type Db } from '../../src/db/connection.ts'
import { rebuildDemandCounts, recomputeMonthlyDemand, type MonthlyDemand } from '../../src/db/curves.ts'
import { isMonth } from '../../src/curves/months.ts'
import { referenceInputs } from './reference-inputs.ts'
import { demandFor } from '../../src/db/dashboard.ts'
import { deleteDocuments, markDuplicate } from '../../src/db/documents.ts'
import { countMapped, countUnmapped, replaceOpenCandidates, unmappedAfter, unmappedBatchEnd } from '../../src/db/taxonomy.ts'
import { importDocuments } from '../../src/ingest/import.ts'
import { acceptAsConcept } from '../../src/taxonomy/decisions.ts'
import { mapStage } from '../../src/taxonomy/stage.ts'
import { importTaxonomy } from '../../src/taxonomy/store.ts'
import { demandInputs, fitStage, runFit } from '../../src/curves/stage.ts'

const config = loadConfig({ db: ':memory:' })
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-demand-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))
const quiet = () => {}

const WORDS = 'alder birch cedar damson elder fennel gorse hazel ivy juniper kale larch maple nettle oak poplar quince rowan sorrel thyme willow yarrow'.split(' ')
const SKILL_TEXT = [
  'Kubernetes and Terraform on the platform.',
  'Python and SQL for reporting.',
  'PyTorch models for the forecasting desk.',
  'Advanced Excel and stakeholder management.',
  'Forklift licence and first aid.',
  'Java services with Spring.',
  'Quillstream orchestration every night.',
]

interface Posting {
  identifier: string
  title: string
  description: string
  datePosted: string
}

/** Fernhollow postings over `months` months from `from`, each with its own filler words (kept apart by the near-duplicate filter). */
function postings(prefix: string, from: number, months: number, perMonth: number): Posting[] {
  const out: Posting[] = []
  let n = 0
  for (let m = from; m < from + months; m++) {
    for (let i = 0; i < perMonth; i++) {
      const local = Array.from({ length: 14 }, (_, k) => WORDS[(n * 5 + k * 7 + m * 3) % WORDS.length]).join(' ')
      const skills = [SKILL_TEXT[(n + m) % SKILL_TEXT.length], SKILL_TEXT[(n * 3 + 1) % SKILL_TEXT.length]].join(' ')
      out.push({
        identifier: `${prefix}${n}`,
        title: `Fernhollow role ${prefix}${n}`,
        description: `Depot ${local} number ${prefix}${n}. ${skills}`,
        datePosted: `${2024 + Math.floor((m - 1) / 12)}-${String(((m - 1) % 12) + 1).padStart(2, '0')}-${String(3 + (i % 20)).padStart(2, '0')}`,
      })
      n++
    }
  }
  return out
}

function writeJsonl(name: string, rows: readonly object[]): string {
  const file = path.join(tmp, name)
  fs.writeFileSync(file, rows.map((r) => JSON.stringify(r)).join('\n') + '\n')
  return file
}

async function importPostings(db: Db, rows: readonly Posting[]): Promise<void> {
  const r = await importDocuments(db, config, 'postings', writeJsonl(`p-${Math.random().toString(36).slice(2)}.jsonl`, rows), { skipBad: false })
  expect(r.refused).toBe(false)
}

async function importRequests(db: Db, rows: readonly { timestamp: string; text: string; channel: string; team: string }[]): Promise<void> {
  const r = await importDocuments(db, config, 'requests', writeJsonl(`r-${Math.random().toString(36).slice(2)}.jsonl`, rows), { skipBad: false })
  expect(r.refused).toBe(false)
}

async function map(db: Db): Promise<void> {
  await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
}

/**
 * The fit's inputs read from the aggregates equal those built from the recomputation from every
 * mention; returns the recomputation.
 */
function expectInStep(db: Db): MonthlyDemand {
  const full = recomputeMonthlyDemand(db)
  expectAggregates(db, full)
  return full
}

/**
 * The fit's inputs read from the aggregates equal those built from a recomputed demand (the current
 * schema's, or one computed elsewhere for a schema older than the current queries).
 */
function expectAggregates(db: Db, expected: MonthlyDemand): void {
  const read = demandInputs(db)
  expect(read.months).toEqual(expected.months.filter((month) => isMonth(month)))
  expect(read.inputs).toEqual(referenceInputs(expected))
  // and no row of the aggregates is left at zero (the recomputation has none)
  expect(db.prepare('SELECT COUNT(*) FROM demand_counts WHERE n <= 0').pluck().get()).toBe(0)
  expect(db.prepare('SELECT COUNT(*) FROM demand_totals WHERE total <= 0').pluck().get()).toBe(0)
}

const ext = (d: MonthlyDemand, id: string, month: string) => d.mentions.get(id)?.external.get(month) ?? 0

/** The demand the dashboard charts (read from the aggregates) against the full recomputation: every month with documents, for skills mentioned at least once. */
function expectDemandTable(db: Db): void {
  const full = recomputeMonthlyDemand(db)
  const expected: { concept_id: string; series: string; month: string; n: number; total: number }[] = []
  for (const id of [...full.mentions.keys()].sort()) {
    if (!full.labels.has(id)) continue
    for (const series of ['external', 'internal'] as const) {
      const counts = full.mentions.get(id)![series]
      if (counts.size === 0) continue
      for (const month of full.months) {
        const total = full.totals[series].get(month) ?? 0
        if (total > 0) expected.push({ concept_id: id, series, month, n: counts.get(month) ?? 0, total })
      }
    }
  }
  expect(demandFor(db, [...full.labels.keys()].sort())).toEqual(expected)
}
const fit = (db: Db) => runFit(db, config, { now: new Date('2024-12-01T00:00:00Z') })

describe('demand aggregates kept by the map stage', () => {
  it('equal the full recomputation after import, map, a second import, requests and reposts', async () => {
    const db = openDb(':memory:')
    const first = postings('a', 1, 6, 12)
    // exact reposts of some postings (other identifiers): stored as duplicates, never counted
    const reposts = first.filter((_, i) => i % 9 === 0).map((p) => ({ ...p, identifier: `${p.identifier}-repost` }))
    await importPostings(db, [...first, ...reposts])
    await importRequests(db, [
      { timestamp: '2024-02-03T10:00:00Z', text: 'Need a Python course for the depot team', channel: 'portal', team: 'north' },
      { timestamp: '2024-02-09T10:00:00Z', text: 'Kubernetes training please', channel: 'portal', team: 'south' },
      { timestamp: '2024-05-01T10:00:00Z', text: 'Excel refresher for the finance office', channel: 'ticket', team: 'north' },
    ])
    // the import queues the originals for the map, not the reposts (never mapped)
    expect(db.prepare('SELECT COUNT(*) FROM documents WHERE duplicate_of IS NOT NULL').pluck().get()).toBe(reposts.length)
    expect(countUnmapped(db)).toBe(first.length + 3)
    expect(db.prepare('SELECT COUNT(*) FROM unmapped_documents u JOIN documents d ON d.id = u.id WHERE d.duplicate_of IS NOT NULL').pluck().get()).toBe(0)
    await map(db)
    expect(countUnmapped(db)).toBe(0)
    const d = expectInStep(db)
    // a real corpus: both series, direct mentions and roll-ups (PyTorch counts for its broader concept)
    expect(d.totals.external.get('2024-01')).toBe(12)
    expect(d.totals.internal.get('2024-02')).toBe(2)
    expect(ext(d, 'kubernetes', '2024-01')).toBeGreaterThan(0)
    expect([...(d.mentions.get('machine-learning')?.external.values() ?? [])].reduce((a, b) => a + b, 0)).toBeGreaterThan(0)
    const dupes = db.prepare('SELECT COUNT(*) FROM documents WHERE duplicate_of IS NOT NULL').pluck().get() as number
    expect(dupes).toBe(reposts.length)

    fit(db)
    expectDemandTable(db)

    // a second import (later months, and more in a month already counted) adds only its own documents
    await importPostings(db, [...postings('b', 6, 3, 10)])
    const mappedBefore = countMapped(db)
    expect(countUnmapped(db)).toBe(30)
    await map(db)
    const after = expectInStep(db)
    expect(countMapped(db)).toBe(mappedBefore + 30)
    expect(countUnmapped(db)).toBe(0)
    expect(after.totals.external.get('2024-06')).toBe(22)
    expect(after.totals.external.get('2024-08')).toBe(10)

    // the fit stage and the dashboard read the aggregates: the rows the recomputation gives
    fit(db)
    expectDemandTable(db)
    const stored = demandFor(db, ['kubernetes'], 'external').map(({ n, total }) => ({ n, total }))
    const full = recomputeMonthlyDemand(db)
    const months = full.months.filter((m) => (full.totals.external.get(m) ?? 0) > 0)
    expect(stored).toEqual(months.map((m) => ({ n: full.mentions.get('kubernetes')?.external.get(m) ?? 0, total: full.totals.external.get(m)! })))
  }, 60_000)

  it('follow a re-map after an accepted candidate and after a replaced taxonomy', async () => {
    const db = openDb(':memory:')
    await importPostings(db, postings('c', 1, 4, 10))
    await map(db)
    expectInStep(db)
    replaceOpenCandidates(db, [{ term: 'quillstream', score: 40, recentDf: 5, earlierDf: 0, trend: [], examples: [] }])
    // accepted under a broader concept: its documents count there too once they are mapped again
    const accepted = acceptAsConcept(db, 'quillstream', { label: 'Quillstream', type: 'hard', broader: ['cloud-computing'] }, 'curator')
    expect(accepted.affected).toBeGreaterThan(0)
    expect(db.prepare("SELECT broader_id FROM concept_broader WHERE concept_id = 'quillstream'").pluck().all()).toEqual(['cloud-computing'])
    // the affected documents are out of the counts until they are mapped again
    const between = expectInStep(db)
    expect(between.totals.external.get('2024-01')! + accepted.affected).toBeGreaterThanOrEqual(10)
    await map(db)
    const remapped = expectInStep(db)
    expect(ext(remapped, 'quillstream', '2024-01')).toBeGreaterThan(0)
    // every quillstream document counts for cloud computing and for what is above it
    for (const up of ['cloud-computing', 'information-technology']) expect(ext(remapped, up, '2024-01')).toBeGreaterThanOrEqual(ext(remapped, 'quillstream', '2024-01'))
    const quill = db.prepare("SELECT document_id FROM mentions WHERE concept_id = 'quillstream'").pluck().all() as number[]
    const underCloud = new Set(db.prepare(`${CONCEPTS_UNDER} SELECT m.document_id FROM mentions m WHERE m.concept_id IN (SELECT id FROM under)`).pluck().all('information-technology') as number[])
    expect(quill.length).toBeGreaterThan(0)
    for (const id of quill) expect(underCloud.has(id)).toBe(true)
    expect(remapped.totals.external.get('2024-01')).toBe(10)
    fit(db)
    expectDemandTable(db)

    const file = path.join(tmp, 'mini.csv')
    fs.writeFileSync(file, ['id,prefLabel,altLabel,hiddenLabel,broader,type', 'kubernetes,Kubernetes,K8s,,containers,hard', 'containers,containers,,,,hard', 'python,Python,,,,hard'].join('\n'))
    expect((await importTaxonomy(db, file, { skipBad: false })).refused).toBe(false)
    const cleared = expectInStep(db)
    expect(cleared.totals.external.size).toBe(0)
    await map(db)
    const again = expectInStep(db)
    expect([...again.mentions.keys()].sort()).toEqual(['containers', 'kubernetes'])
    // containers counts by roll-up exactly where kubernetes does
    expect(again.mentions.get('containers')!.external).toEqual(again.mentions.get('kubernetes')!.external)
    // concepts no longer in the taxonomy have no demand left
    fit(db)
    expectDemandTable(db)
    expect(demandFor(db, ['quillstream'])).toEqual([])
  }, 60_000)

  it('follow deleted documents (an original with reposts), their re-import, and a document marked a repost later', async () => {
    const db = openDb(':memory:')
    const rows = postings('e', 1, 3, 8)
    const reposts = [rows[0]!, rows[0]!, rows[5]!].map((p, i) => ({ ...p, identifier: `${p.identifier}-again${i}` }))
    await importPostings(db, [...rows, ...reposts])
    await map(db)
    expectInStep(db)
    const idOf = (external: string) => db.prepare('SELECT id FROM documents WHERE external_id = ?').pluck().get(external) as number
    const original = idOf('e0')
    const heir = idOf('e0-again0')
    expect(db.prepare('SELECT duplicate_of FROM documents WHERE id = ?').pluck().get(heir)).toBe(original)

    const deleted = db.transaction(() => deleteDocuments(db, [original, idOf('e3'), idOf('e9')]))()
    expect(deleted).toBe(3)
    const afterDelete = expectInStep(db)
    expect(afterDelete.totals.external.get('2024-01')).toBe(6)
    // the earliest repost is the original now, the other repost points at it; mapped by the next run
    expect(db.prepare('SELECT duplicate_of FROM documents WHERE id = ?').pluck().get(heir)).toBeNull()
    expect(db.prepare('SELECT duplicate_of FROM documents WHERE id = ?').pluck().get(idOf('e0-again1'))).toBe(heir)
    await map(db)
    expect(expectInStep(db).totals.external.get('2024-01')).toBe(7)

    // re-importing the deleted documents stores them again (e0 is now a repost of its heir)
    await importPostings(db, rows.filter((p) => ['e0', 'e3', 'e9'].includes(p.identifier)))
    await map(db)
    const reimported = expectInStep(db)
    expect(reimported.totals.external.get('2024-01')).toBe(8)
    expect(reimported.totals.external.get('2024-02')).toBe(8)

    // a mapped original found to be a repost after it was stored leaves the counts
    db.transaction(() => markDuplicate(db, idOf('e10'), idOf('e11'), 0.93))()
    const marked = expectInStep(db)
    expect(marked.totals.external.get('2024-02')).toBe(7)
    expect(db.prepare('SELECT COUNT(*) FROM mentions WHERE document_id = ?').pluck().get(idOf('e10'))).toBe(0)
    expect(() => db.transaction(() => markDuplicate(db, idOf('e11'), idOf('e10'), 0.9))()).toThrow(/cannot be its own original/)

    // the repair recomputes the same rows
    const before = db.prepare('SELECT * FROM demand_counts').all()
    rebuildDemandCounts(db)
    expect(db.prepare('SELECT * FROM demand_counts').all()).toEqual(before)
  }, 60_000)

  it('refuse to let an aggregate fall below zero silently (a writer that bypassed them)', async () => {
    const db = openDb(':memory:')
    await importPostings(db, postings('f', 1, 2, 5))
    await map(db)
    db.prepare('DELETE FROM demand_counts').run()
    const id = db.prepare("SELECT id FROM documents WHERE external_id = 'f0'").pluck().get() as number
    expect(() => db.transaction(() => deleteDocuments(db, [id]))()).toThrow(/fell below zero.*tides run fit --rebuild/)
    // rolled back: the document is still there
    expect(db.prepare('SELECT COUNT(*) FROM documents WHERE id = ?').pluck().get(id)).toBe(1)
    rebuildDemandCounts(db)
    expectInStep(db)
  }, 60_000)

  it('are repaired by `tides run fit --rebuild` after a writer bypassed them, and the fit then reads the repaired counts', async () => {
    const db = openDb(':memory:')
    await importPostings(db, postings('g', 1, 3, 6))
    await map(db)
    const before = expectInStep(db)
    // a writer that bypassed the aggregates: counts and a month's total are off
    db.prepare('UPDATE demand_counts SET n = n + 7').run()
    db.prepare('DELETE FROM demand_totals WHERE (series, month) IN (SELECT series, month FROM demand_totals ORDER BY month LIMIT 1)').run()
    expect(() => expectInStep(db)).toThrow()
    const logged: string[] = []
    const result = await fitStage.run({ db, config, log: (m) => logged.push(m), trigger: 'manual', options: { rebuild: true } })
    expect(logged.some((m) => /demand aggregates rebuilt from documents and mentions \(\d+ rows\)/.test(m))).toBe(true)
    expect(expectInStep(db)).toEqual(before)
    expectDemandTable(db)
    expect(result.counts['skills']).toBeGreaterThan(0)
  }, 60_000)
})

describe('migration 3', () => {
  it('upgrades a version-2 database: aggregates filled from stored mentions, mentions and demand kept row for row without rowid', () => {
    const file = path.join(tmp, 'v2.db')
    const v2 = openDb(file, { upTo: 2 })
    expect(schemaVersion(v2)).toBe(2)
    v2.transaction(() => {
      v2.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
      for (const id of ['sql', 'python', 'data']) v2.prepare("INSERT INTO concepts (id, pref_label, type) VALUES (?, ?, 'hard')").run(id, id.toUpperCase())
      // the roll-up rows below follow these links (migration 14 drops them and derives them from the links)
      v2.prepare("INSERT INTO concept_broader (concept_id, broader_id) VALUES ('sql', 'data'), ('python', 'data')").run()
      const doc = v2.prepare(
        `INSERT INTO documents (source_id, external_id, kind, posted_at, month, text_hash, duplicate_of, mapped_version) VALUES ('fern', ?, ?, ?, ?, ?, ?, ?)`,
      )
      const mention = v2.prepare('INSERT INTO mentions (document_id, concept_id, count, first_offset, via) VALUES (?, ?, ?, ?, ?)')
      let serial = 0
      for (const month of ['2024-01', '2024-02', '2024-03']) {
        for (let i = 0; i < 6; i++) {
          const kind = i < 5 ? 'posting' : 'request'
          const mapped = i === 4 ? null : 1 // one unmapped posting a month: not counted
          const id = Number(doc.run(`d${serial}`, kind, `${month}-05`, month, `h${serial++}`, null, mapped).lastInsertRowid)
          mention.run(id, i % 2 ? 'sql' : 'python', 2, 7, 'text')
          mention.run(id, 'data', 1, null, 'rollup')
          if (i === 0) {
            const repost = Number(doc.run(`d${serial}`, 'posting', `${month}-06`, month, `h${serial++}`, id, null).lastInsertRowid)
            mention.run(repost, 'sql', 1, 0, 'text') // a repost's mention never counts
          }
        }
      }
      v2.prepare("INSERT INTO demand (concept_id, series, month, n, total) VALUES ('sql', 'external', '2024-01', 2, 4)").run()
    })()
    const mentionsBefore = v2.prepare('SELECT * FROM mentions ORDER BY document_id, concept_id').all()
    v2.close()
    // the demand of these documents, recomputed by the current schema's queries on a fully migrated
    // copy (the counts checked by hand below); each step's aggregates must equal it
    fs.copyFileSync(file, path.join(tmp, 'v2-latest.db'))
    const latest = openDb(path.join(tmp, 'v2-latest.db'))
    const expected = recomputeMonthlyDemand(latest)
    latest.close()

    const db = openDb(file, { upTo: 3 })
    expect(schemaVersion(db)).toBe(3)
    expect(db.prepare('SELECT * FROM mentions ORDER BY document_id, concept_id').all()).toEqual(mentionsBefore)
    expect(db.prepare('SELECT * FROM demand').all()).toEqual([{ concept_id: 'sql', series: 'external', month: '2024-01', n: 2, total: 4 }])
    const d = expected
    expectAggregates(db, expected)
    expect(d.totals.external.get('2024-02')).toBe(4)
    expect(d.totals.internal.get('2024-02')).toBe(1)
    expect(d.mentions.get('data')!.external.get('2024-03')).toBe(4)
    expect(d.mentions.get('sql')!.external.get('2024-01')).toBe(2)
    // one B-tree per table: no rowid, no separate primary-key index; the concept index is kept
    const sql = (name: string) => db.prepare('SELECT sql FROM sqlite_master WHERE name = ?').pluck().get(name) as string
    expect(sql('mentions')).toMatch(/WITHOUT ROWID/)
    expect(sql('demand')).toMatch(/WITHOUT ROWID/)
    expect(sql('mentions_concept')).toMatch(/mentions\(concept_id\)/)
    expect(db.prepare("SELECT COUNT(*) FROM sqlite_master WHERE name = 'sqlite_autoindex_mentions_1'").pluck().get()).toBe(0)
    // foreign keys still hold on the rebuilt table
    expect(() => db.prepare("INSERT INTO mentions (document_id, concept_id, count, via) VALUES (1, 'nowhere', 1, 'text')").run()).toThrow(/FOREIGN KEY/)
    expect(new Database(file, { readonly: true }).pragma('integrity_check', { simple: true })).toBe('ok')
    db.close()

    // migration 4: the per-fit demand copy goes; the dashboard charts the aggregates
    const v4 = openDb(file, { upTo: 4 })
    expect(schemaVersion(v4)).toBe(4)
    expect(v4.prepare("SELECT COUNT(*) FROM sqlite_master WHERE name = 'demand'").pluck().get()).toBe(0)
    expect(demandFor(v4, ['sql'], 'external')).toEqual(
      ['2024-01', '2024-02', '2024-03'].map((month) => ({ concept_id: 'sql', series: 'external', month, n: expected.mentions.get('sql')?.external.get(month) ?? 0, total: 4 })),
    )
    const unmappedBefore = v4.prepare('SELECT id FROM documents WHERE mapped_version IS NULL AND duplicate_of IS NULL ORDER BY id').pluck().all()
    v4.close()

    // migration 5: the unmapped index holds only the unmapped originals (not the reposts, never
    // mapped) and counting them reads it alone
    const v5 = openDb(file, { upTo: 5 })
    expect(schemaVersion(v5)).toBe(5)
    expect(unmappedBefore).toHaveLength(3)
    expect(v5.prepare("SELECT sql FROM sqlite_master WHERE name = 'documents_unmapped'").pluck().get()).toMatch(/WHERE mapped_version IS NULL AND duplicate_of IS NULL/)
    const plan = v5.prepare('EXPLAIN QUERY PLAN SELECT COUNT(*) FROM documents INDEXED BY documents_unmapped WHERE mapped_version IS NULL AND duplicate_of IS NULL').all() as { detail: string }[]
    expect(plan.map((r) => r.detail).join(' ')).toMatch(/COVERING INDEX documents_unmapped/)
    expect(v5.prepare('SELECT id FROM documents INDEXED BY documents_unmapped WHERE mapped_version IS NULL AND duplicate_of IS NULL ORDER BY id').pluck().all()).toEqual(unmappedBefore)
    v5.close()

    // migration 9: the map's queue holds the same unmapped originals, the column and its index go,
    // and the aggregates are still in step with the documents the queue calls mapped
    const v9 = openDb(file, { upTo: 9 })
    expect(schemaVersion(v9)).toBe(9)
    expect(countUnmapped(v9)).toBe(3)
    expect(unmappedAfter(v9, 0, 10).map((doc) => doc.id)).toEqual(unmappedBefore)
    expect(unmappedBatchEnd(v9, 0, 2)).toBe(unmappedBefore[1])
    expect(unmappedBatchEnd(v9, unmappedBefore[2] as number, 2)).toBeUndefined()
    expect(countMapped(v9)).toBe(15) // 6 originals a month, one of them unmapped, over 3 months
    expect((v9.prepare('PRAGMA table_info(documents)').all() as { name: string }[]).map((c) => c.name)).not.toContain('mapped_version')
    expect(v9.prepare("SELECT COUNT(*) FROM sqlite_master WHERE name = 'documents_unmapped'").pluck().get()).toBe(0)
    expect(expectInStep(v9)).toEqual(expected)
    expect(v9.pragma('integrity_check', { simple: true })).toBe('ok')
    v9.close()
  })
})
