import { describe, it, expect, beforeEach } from 'vitest'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { loadConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { bumpTaxonomyVersion, candidatesComputed, conceptCount, countUnmapped, getCandidate, listCandidates, mentionSummary, replaceOpenCandidates, taxonomyVersion } from '../../src/db/taxonomy.ts'
import { pendingFor } from '../../src/events/outbox.ts'
import { rebuildDemandCounts } from '../../src/db/curves.ts'
import { importDocuments } from '../../src/ingest/import.ts'
import { acceptAsAltLabel, acceptAsConcept, DecisionError, dismissCandidate } from '../../src/taxonomy/decisions.ts'
import { candidatesDue, mapStage, mapUnmapped, refreshCandidates, TaxonomyChangedError } from '../../src/taxonomy/stage.ts'
import { ensureTaxonomy, importTaxonomy, matcherFromDb, storedTaxonomy } from '../../src/taxonomy/store.ts'
import { candidatesInBackground, mapperSource } from '../../src/taxonomy/parallel.ts'

const config = loadConfig({ db: ':memory:' })
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-taxonomy-'))
const quiet = () => {}

function postingsFile(name: string, rows: { id: string; title: string; description: string; date: string; skills?: unknown }[]): string {
  const file = path.join(tmp, name)
  fs.writeFileSync(file, rows.map((r) => JSON.stringify({ identifier: r.id, title: r.title, description: r.description, datePosted: r.date, ...(r.skills ? { skills: r.skills } : {}) })).join('\n') + '\n')
  return file
}

async function dbWith(rows: Parameters<typeof postingsFile>[1]): Promise<Db> {
  const db = openDb(':memory:')
  const r = await importDocuments(db, config, 'postings', postingsFile(`p-${Math.random().toString(36).slice(2)}.jsonl`, rows), { skipBad: false })
  expect(r.refused).toBe(false)
  return db
}

const POSTINGS = [
  { id: 'a', title: 'Platform engineer', description: 'Kubernetes and Terraform on Fernhollow infrastructure. PyTorch a plus.', date: '2024-01-10' },
  { id: 'b', title: 'Analyst', description: 'Advanced Excel, SQL; negotiating with suppliers.', date: '2024-02-11', skills: ['R', { '@type': 'DefinedTerm', name: 'Tableau' }] },
  { id: 'c', title: 'Warehouse lead', description: 'Forklift licence and first aid. Excel at teamwork.', date: '2024-03-12' },
]

describe('map stage', () => {
  let db: Db
  beforeEach(async () => {
    db = await dbWith(POSTINGS)
  })

  it('loads the shipped taxonomy on first run, maps every document once and emits documents.mapped', async () => {
    expect(conceptCount(db)).toBe(0)
    const before = pendingFor(db, 'test', ['documents.mapped']).events.length
    const result = await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    expect(conceptCount(db)).toBeGreaterThan(600)
    expect(result.counts['mapped']).toBe(3)
    expect(countUnmapped(db)).toBe(0)
    const events = pendingFor(db, 'test', ['documents.mapped']).events
    expect(events.length - before).toBe(1)
    expect(JSON.parse(events[events.length - 1]!.payload_json)).toMatchObject({ mapped: 3 })
    const summary = new Map(mentionSummary(db).map((m) => [m.concept_id, m]))
    expect(summary.get('kubernetes')).toMatchObject({ documents: 1, direct: 1 })
    expect(summary.get('machine-learning')).toMatchObject({ documents: 1, direct: 0 }) // PyTorch rolled up
    expect(summary.get('r')).toMatchObject({ documents: 1, direct: 1 }) // from the skills field
    expect(summary.has('microsoft-excel')).toBe(true)
    // "Excel at teamwork" is not Excel: only document b mentions it
    expect(summary.get('microsoft-excel')!.documents).toBe(1)
    // a second run has nothing to do and emits nothing
    const again = await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    expect(again.counts['mapped']).toBe(0)
    expect(pendingFor(db, 'test', ['documents.mapped']).events.length).toBe(events.length)
  })

  it('maps with worker threads to the same mentions as on one thread', async () => {
    await ensureTaxonomy(db, config)
    const one = await mapUnmapped(db, config, quiet, { threads: 1 })
    const single = mentionSummary(db)
    const db2 = await dbWith(POSTINGS)
    await ensureTaxonomy(db2, config)
    const many = await mapUnmapped(db2, config, quiet, { threads: 2, threshold: 1 })
    expect(many.workers).toBe(2)
    expect(many.mapped).toBe(one.mapped)
    expect(mentionSummary(db2)).toEqual(single)
  }, 60_000)

  it('maps a database file with workers that read the texts themselves, to the same mentions and aggregates', async () => {
    await ensureTaxonomy(db, config)
    await mapUnmapped(db, config, quiet, { threads: 1 })
    const file = path.join(tmp, `workers-${Math.random().toString(36).slice(2)}.db`)
    const fileDb = openDb(file)
    const more = [...POSTINGS, ...POSTINGS.map((p, i) => ({ ...p, id: `${p.id}2`, description: `${p.description} Python and SQL ${i}.` }))]
    const r = await importDocuments(fileDb, config, 'postings', postingsFile('file.jsonl', more), { skipBad: false })
    expect(r.refused).toBe(false)
    await ensureTaxonomy(fileDb, config)
    const logs: string[] = []
    const counts = await mapUnmapped(fileDb, config, (m) => logs.push(m), { threads: 2, threshold: 1, batch: 2, groupDocs: 2 })
    expect(counts.workers).toBe(2)
    expect(counts.mapped).toBe(6)
    expect(countUnmapped(fileDb)).toBe(0)
    // the first three documents map as they do on one thread over an in-memory database
    const firstThree = (d: Db) => d.prepare('SELECT d.external_id, m.concept_id, m.count, m.first_offset, m.via FROM mentions m JOIN documents d ON d.id = m.document_id WHERE d.external_id IN (?, ?, ?) ORDER BY 1, 2').all('a', 'b', 'c')
    expect(firstThree(fileDb)).toEqual(firstThree(db))
    // the demand aggregates equal their full recomputation
    const aggregates = (d: Db) => d.prepare('SELECT * FROM demand_counts ORDER BY 1, 2, 3').all()
    const before = aggregates(fileDb)
    rebuildDemandCounts(fileDb)
    expect(aggregates(fileDb)).toEqual(before)
    fileDb.close()
  }, 60_000)

  const hasConceptIndex = (d: Db) => d.prepare("SELECT COUNT(*) FROM sqlite_master WHERE type = 'index' AND name = 'mentions_concept'").pluck().get() === 1
  const allMentions = (d: Db) => d.prepare('SELECT * FROM mentions ORDER BY document_id, concept_id').all()

  it('a bulk map drops the mentions-by-concept index and builds it at the end, with the same mentions', async () => {
    await ensureTaxonomy(db, config)
    const logs: string[] = []
    await mapUnmapped(db, config, (m) => logs.push(m), { threads: 1, bulkMin: 1 })
    expect(logs.join('\n')).toMatch(/bulk map of 3 documents/)
    expect(hasConceptIndex(db)).toBe(true)
    const db2 = await dbWith(POSTINGS)
    await ensureTaxonomy(db2, config)
    await mapUnmapped(db2, config, quiet, { threads: 1 })
    expect(allMentions(db)).toEqual(allMentions(db2))
    // the index is what the by-concept readers use
    expect(db.prepare("EXPLAIN QUERY PLAN SELECT document_id FROM mentions WHERE concept_id = 'kubernetes'").all().map((r) => (r as { detail: string }).detail).join(' ')).toMatch(/mentions_concept/)
  })

  it('writes mentions with the foreign-key checks its own (none dangling) and restores them afterwards', async () => {
    await ensureTaxonomy(db, config)
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1)
    await mapUnmapped(db, config, quiet, { threads: 1, batch: 1, groupDocs: 1 })
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1)
    expect(db.prepare('SELECT COUNT(*) FROM mentions').pluck().get()).toBeGreaterThan(5)
    expect(db.pragma('foreign_key_check')).toEqual([])
  })

  it('stops with a clear error when the taxonomy changes during the run, writing nothing against the old one after the change', async () => {
    await ensureTaxonomy(db, config)
    const version = taxonomyVersion(db)
    // another process changes the taxonomy after the first group's commit
    const log = (m: string) => { if (m === 'map: 1/3') bumpTaxonomyVersion(db) }
    await expect(mapUnmapped(db, config, log, { threads: 1, batch: 1, groupDocs: 1 })).rejects.toThrow(new TaxonomyChangedError(version, version + 1).message)
    expect(countUnmapped(db)).toBe(2)
    expect(db.prepare('SELECT COUNT(DISTINCT document_id) FROM mentions').pluck().get()).toBe(1)
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1)
  })

  it('an increment smaller than what is mapped keeps the index; a map after a stopped bulk map rebuilds it', async () => {
    await ensureTaxonomy(db, config)
    await mapUnmapped(db, config, quiet, { threads: 1, bulkMin: 1 })
    // a bulk map killed before its end leaves the index dropped
    db.exec('DROP INDEX mentions_concept')
    const more = await importDocuments(db, config, 'postings', postingsFile('more.jsonl', [{ id: 'd', title: 'Data engineer', description: 'SQL and Python pipelines.', date: '2024-04-01' }]), { skipBad: false })
    expect(more.refused).toBe(false)
    const logs: string[] = []
    const counts = await mapUnmapped(db, config, (m) => logs.push(m), { threads: 1, bulkMin: 1 })
    expect(counts.mapped).toBe(1)
    expect(logs.join('\n')).not.toMatch(/bulk map of/)
    expect(logs.join('\n')).toMatch(/rebuilt the mentions-by-concept index/)
    expect(hasConceptIndex(db)).toBe(true)
  })

  it('a map run stopped after its last mapping commit leaves the candidate decision owed; the next run makes it', async () => {
    await ensureTaxonomy(db, config)
    // what a run killed between its last commit and the candidate refresh leaves behind
    await mapUnmapped(db, config, quiet, { threads: 1 })
    expect(countUnmapped(db)).toBe(0)
    expect(candidatesComputed(db)).toBeUndefined()
    const next = await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    expect(next.counts['mapped']).toBe(0)
    expect(next.counts['candidatesRecomputed']).toBe(1)
    expect(candidatesComputed(db)).toBeDefined()
    // decided: a further run with nothing to map leaves the list alone
    const after = await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    expect(after.counts['candidatesRecomputed']).toBe(0)
    expect(db.prepare("SELECT COUNT(*) FROM settings WHERE key = 'candidates.owed'").pluck().get()).toBe(0)
  })

  it('builds the index again when a bulk map fails part-way', async () => {
    await ensureTaxonomy(db, config)
    db.exec("CREATE TRIGGER refuse BEFORE INSERT ON mentions WHEN NEW.concept_id = 'kubernetes' BEGIN SELECT RAISE(ABORT, 'disk trouble'); END")
    await expect(mapUnmapped(db, config, quiet, { threads: 1, bulkMin: 1 })).rejects.toThrow(/disk trouble/)
    expect(hasConceptIndex(db)).toBe(true)
    expect(countUnmapped(db)).toBe(3) // the failed batch was rolled back as a whole
  })
})

describe('taxonomy import and changes', () => {
  const CSV = ['id,prefLabel,altLabel,hiddenLabel,broader,type', 'quillstream,Quillstream,Quill stream,,,hard', 'kubernetes,Kubernetes,K8s,,containers,hard', 'containers,containers,,,,hard', 'teamwork,teamwork,team player,,,soft'].join('\n')

  it('replaces the taxonomy, marks every document for re-mapping and says how many', async () => {
    const db = await dbWith(POSTINGS)
    await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    const file = path.join(tmp, 'mini.csv')
    fs.writeFileSync(file, CSV)
    const v0 = taxonomyVersion(db)
    const r = await importTaxonomy(db, file, { skipBad: false })
    expect(r).toMatchObject({ refused: false, imported: 4, affected: 3 })
    expect(taxonomyVersion(db)).toBe(v0 + 1)
    expect(countUnmapped(db)).toBe(3)
    const ev = pendingFor(db, 'test', ['taxonomy.changed']).events.at(-1)!
    expect(JSON.parse(ev.payload_json)).toMatchObject({ reason: 'import', affected: 3, concepts: 4 })
    const res = await mapStage.run({ db, config, log: quiet, trigger: 'event:taxonomy.changed', options: {} })
    expect(res.summary).toContain('after a taxonomy change')
    expect(mentionSummary(db).map((m) => m.concept_id).sort()).toEqual(['containers', 'kubernetes', 'teamwork'])
  })

  it('announces the map done after a taxonomy change that touched no document, so that the refit follows', async () => {
    const db = await dbWith(POSTINGS)
    await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    const mappedEvents = () => pendingFor(db, 'test', ['documents.mapped']).events.map((e) => JSON.parse(e.payload_json) as { mapped: number })
    const before = mappedEvents().length
    replaceOpenCandidates(db, [{ term: 'loomwright', score: 9, recentDf: 1, earlierDf: 0, trend: [], examples: [] }])
    expect(acceptAsConcept(db, 'loomwright', { type: 'hard' }, 'curator').affected).toBe(0)
    expect(countUnmapped(db)).toBe(0)
    await mapStage.run({ db, config, log: quiet, trigger: 'event:taxonomy.changed', options: {} })
    expect(mappedEvents().slice(before)).toEqual([{ mapped: 0, version: taxonomyVersion(db), mentions: 0, rollups: 0 }])
    // a run with nothing to map and no change announces nothing
    await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    expect(mappedEvents()).toHaveLength(before + 1)
  })

  it('refuses a taxonomy with errors, naming file and line, unless --skip-bad', async () => {
    const db = openDb(':memory:')
    const file = path.join(tmp, 'bad.csv')
    fs.writeFileSync(file, CSV + '\nbroken,Broken,,,nowhere,hard\n,NoId,,,,hard\n')
    const refused = await importTaxonomy(db, file, { skipBad: false })
    expect(refused.refused).toBe(true)
    expect(refused.problems.map((p) => [p.line, p.column])).toEqual([[6, 'broader'], [7, 'id']])
    expect(conceptCount(db)).toBe(0)
    const kept = await importTaxonomy(db, file, { skipBad: true })
    expect(kept).toMatchObject({ refused: false, imported: 5 })
    expect(conceptCount(db)).toBe(5)
  })

  it('imports SKOS Turtle', async () => {
    const db = openDb(':memory:')
    const r = await importTaxonomy(db, path.join(import.meta.dirname, 'fixtures/skos-reference-examples.ttl'), { skipBad: false })
    expect(r).toMatchObject({ refused: false, imported: 7 })
    expect(matcherFromDb(db).mapText('PyTorch and fauna').mentions.map((m) => m.conceptId)).toEqual(['pytorch', 'animals'])
  })

  it('accepts a candidate as a new concept or an altLabel, re-mapping only affected documents', async () => {
    const db = await dbWith([
      ...POSTINGS,
      { id: 'd', title: 'Data engineer', description: 'Pipelines orchestrated with Quillstream.', date: '2024-04-01' },
      { id: 'e', title: 'Data engineer', description: 'Brackenfold ledgers and Quillstream jobs.', date: '2024-04-02' },
    ])
    await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    replaceOpenCandidates(db, [
      { term: 'quillstream', score: 40, recentDf: 2, earlierDf: 0, trend: [], examples: [] },
      { term: 'brackenfold ledgers', score: 20, recentDf: 1, earlierDf: 0, trend: [], examples: [] },
      { term: 'warehouse lead', score: 5, recentDf: 1, earlierDf: 0, trend: [], examples: [] },
    ])
    const accepted = acceptAsConcept(db, 'quillstream', { label: 'Quillstream', type: 'hard' }, 'curator')
    expect(accepted).toMatchObject({ conceptId: 'quillstream', affected: 2 })
    expect(getCandidate(db, 'quillstream')!.status).toBe('accepted')
    expect(countUnmapped(db)).toBe(2)
    await mapStage.run({ db, config, log: quiet, trigger: 'event:taxonomy.changed', options: {} })
    expect(mentionSummary(db).find((m) => m.concept_id === 'quillstream')).toMatchObject({ documents: 2 })

    // the map run recomputed the open candidates; put the ones this test decides back
    replaceOpenCandidates(db, [
      { term: 'brackenfold ledgers', score: 20, recentDf: 1, earlierDf: 0, trend: [], examples: [] },
      { term: 'warehouse lead', score: 5, recentDf: 1, earlierDf: 0, trend: [], examples: [] },
    ])
    const alt = acceptAsAltLabel(db, 'brackenfold ledgers', 'accounting', 'curator')
    expect(alt.affected).toBe(1)
    await mapStage.run({ db, config, log: quiet, trigger: 'event:taxonomy.changed', options: {} })
    expect(matcherFromDb(db).mapText('brackenfold ledger').mentions.map((m) => m.conceptId)).toEqual(['accounting'])

    replaceOpenCandidates(db, [{ term: 'warehouse lead', score: 5, recentDf: 1, earlierDf: 0, trend: [], examples: [] }])
    expect(dismissCandidate(db, 'warehouse lead', 'curator').affected).toBe(0)
    expect(getCandidate(db, 'warehouse lead')!.status).toBe('dismissed')
    expect(() => dismissCandidate(db, 'warehouse lead', 'curator')).toThrow(DecisionError)
    expect(() => acceptAsConcept(db, 'no such term', {}, 'x')).toThrow(/no candidate term/)
    replaceOpenCandidates(db, [{ term: 'kubernetes clusters', score: 1, recentDf: 1, earlierDf: 0, trend: [], examples: [] }])
    expect(() => acceptAsAltLabel(db, 'kubernetes clusters', 'nope', 'x')).toThrow(/no concept/)
    expect(() => acceptAsConcept(db, 'kubernetes clusters', { label: 'K8s' }, 'x')).toThrow(/already a label of concept "kubernetes"/)
  })
})

describe('candidate terms in the database', () => {
  it('finds a term rising in recent months, keeps decided terms and never reopens dismissed ones', async () => {
    const rows: Parameters<typeof postingsFile>[1] = []
    // varied invented wording, so that the near-duplicate filter keeps the postings apart
    const words = 'alder birch cedar damson elder fennel gorse hazel ivy juniper kale larch maple nettle oak poplar quince rowan sorrel thyme'.split(' ')
    const filler = ['Python and SQL for reporting.', 'Stakeholder management across the cooperative.', 'Kubernetes and Terraform experience.', 'Month-end close with the finance office.']
    let n = 0
    for (let m = 1; m <= 12; m++) {
      for (let i = 0; i < 20; i++) {
        const rising = m >= 7 && i < 4 + (m - 7) * 2
        const local = Array.from({ length: 12 }, (_, k) => words[(n * 7 + k * 3 + m) % words.length]).join(' ')
        rows.push({ id: `x${n++}`, title: `Role ${n}`, description: `${filler[i % 4]} Site ${local} depot ${n}. ${filler[(i + 1) % 4]}${rising ? ' We run Quillstream orchestration daily.' : ''}`, date: `2024-${String(m).padStart(2, '0')}-05` })
      }
    }
    const db = await dbWith(rows)
    await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    const open = listCandidates(db, 'open', 10)
    expect(open[0]!.term).toBe('quillstream orchestration')
    expect(open[0]!.earlier_df).toBe(0)
    expect(JSON.parse(open[0]!.examples_json)[0].snippet).toContain('Quillstream orchestration')
    dismissCandidate(db, 'quillstream orchestration', 'curator')
    const again = refreshCandidates(db, config)
    expect(again.candidates.map((c) => c.term)).not.toContain('quillstream orchestration')
    expect(getCandidate(db, 'quillstream orchestration')!.status).toBe('dismissed')
  })
})

describe('candidate terms recomputed at most every refreshHours', () => {
  /** Postings of months from..to, with 'Quillstream orchestration' rising from month 7. */
  function risingRows(prefix: string, from: number, to: number): Parameters<typeof postingsFile>[1] {
    const rows: Parameters<typeof postingsFile>[1] = []
    const words = 'alder birch cedar damson elder fennel gorse hazel ivy juniper kale larch maple nettle oak poplar quince rowan sorrel thyme'.split(' ')
    const filler = ['Python and SQL for reporting.', 'Stakeholder management across the cooperative.', 'Kubernetes and Terraform experience.', 'Month-end close with the finance office.']
    let n = 0
    for (let m = from; m <= to; m++) {
      for (let i = 0; i < 20; i++, n++) {
        const rising = m >= 7 && i < 4 + (m - 7) * 2
        const local = Array.from({ length: 12 }, (_, k) => words[(n * 7 + k * 3 + m) % words.length]).join(' ')
        rows.push({ id: `${prefix}${n}`, title: `Role ${prefix}${n}`, description: `${filler[i % 4]} Site ${local} depot ${prefix}${n}. ${filler[(i + 1) % 4]}${rising ? ' We run Quillstream orchestration daily.' : ''}`, date: `2024-${String(m).padStart(2, '0')}-05` })
      }
    }
    return rows
  }
  it('computes a due list in a worker thread while a database file is mapped, the same list as computed afterwards', async () => {
    const file = path.join(tmp, `candidates-${Math.random().toString(36).slice(2)}.db`)
    const fileDb = openDb(file)
    const r = await importDocuments(fileDb, config, 'postings', postingsFile('cand-file.jsonl', risingRows('f', 1, 12)), { skipBad: false })
    expect(r.refused).toBe(false)
    const withWorkers = { ...config, taxonomy: { ...config.taxonomy, workerThreshold: 1 } }
    const result = await mapStage.run({ db: fileDb, config: withWorkers, log: quiet, trigger: 'manual', options: {} })
    expect(result.counts['candidatesRecomputed']).toBe(1)
    const stored = listCandidates(fileDb, 'open', 50).map((c) => [c.term, c.recent_df, c.earlier_df, c.trend_json, c.examples_json])
    expect(stored[0]![0]).toBe('quillstream orchestration')
    // the same list computed on this thread after the map
    const inline = refreshCandidates(fileDb, config)
    expect(inline.candidates.map((c) => [c.term, c.recentDf, c.earlierDf, JSON.stringify(c.trend), JSON.stringify(c.examples)])).toEqual(stored)
    fileDb.close()
  }, 60_000)

  it('a candidate worker that cannot read its database fails with a clear error (the map stage then computes the list itself)', async () => {
    const db = await dbWith(POSTINGS.slice(0, 1))
    await ensureTaxonomy(db, config)
    const missing = path.join(tmp, 'no-such.db')
    const job = candidatesInBackground(mapperSource(storedTaxonomy(db), null, '(none)', missing), config)
    await expect(job.result).rejects.toThrow(/candidate terms worker: .*(no-such\.db|unable to open|does not exist)/)
    await job.stop()
  }, 60_000)

  const trendMonths = (db: Db) => (JSON.parse(getCandidate(db, 'quillstream orchestration')!.trend_json) as { month: string }[]).map((t) => t.month)

  it('keeps the stored list within the interval, recomputes after it, after a taxonomy change and with refreshHours 0', async () => {
    const db = await dbWith(risingRows('a', 1, 11))
    const first = await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    expect(first.counts?.['candidatesRecomputed']).toBe(1)
    const computed = candidatesComputed(db)!
    expect(Date.now() - Date.parse(computed.at)).toBeLessThan(60_000)
    expect(trendMonths(db).at(-1)).toBe('2024-11')

    // a new month within the interval: mapped, but the list (and when it was computed) is kept
    const more = await importDocuments(db, config, 'postings', postingsFile('p-b.jsonl', risingRows('b', 12, 12)), { skipBad: false })
    expect(more.imported).toBe(20)
    const second = await mapStage.run({ db, config, log: quiet, trigger: 'manual', options: {} })
    expect(second.counts?.['mapped']).toBe(20)
    expect(second.counts?.['candidatesRecomputed']).toBe(0)
    expect(second.summary).toContain(`candidate terms kept from ${computed.at}`)
    expect(candidatesComputed(db)).toEqual(computed)
    expect(trendMonths(db).at(-1)).toBe('2024-11')

    // due again once refreshHours (default 24) have passed, and not a minute before
    const at = Date.parse(computed.at)
    expect(candidatesDue(db, config, new Date(at + 23.9 * 3_600_000)).due).toBe(false)
    expect(candidatesDue(db, config, new Date(at + 24 * 3_600_000)).due).toBe(true)
    // the recomputation then equals the one a fresh database with every document gives
    const later = new Date(at + 25 * 3_600_000)
    const recomputed = refreshCandidates(db, config, undefined, later)
    expect(candidatesComputed(db)!.at).toBe(later.toISOString())
    expect(trendMonths(db).at(-1)).toBe('2024-12')
    const fresh = await dbWith([...risingRows('a', 1, 11), ...risingRows('b', 12, 12)])
    await mapStage.run({ db: fresh, config, log: quiet, trigger: 'manual', options: {} })
    expect(listCandidates(db, 'open', 50).map((r) => [r.term, r.score, r.trend_json])).toEqual(listCandidates(fresh, 'open', 50).map((r) => [r.term, r.score, r.trend_json]))
    expect(recomputed.candidates.length).toBeGreaterThan(0)

    // a taxonomy change makes the list due at once (its labels decide what a candidate is)
    expect(candidatesDue(db, config, later).due).toBe(false)
    acceptAsAltLabel(db, 'quillstream orchestration', 'python', 'curator')
    expect(candidatesDue(db, config, later).due).toBe(true)

    // refreshHours 0: every map run that maps documents recomputes
    const every = { ...config, taxonomy: { ...config.taxonomy, candidates: { ...config.taxonomy.candidates, refreshHours: 0 } } }
    expect(candidatesDue(fresh, every).due).toBe(true)
    await importDocuments(fresh, every, 'postings', postingsFile('p-c.jsonl', risingRows('c', 12, 12)), { skipBad: false })
    const third = await mapStage.run({ db: fresh, config: every, log: quiet, trigger: 'manual', options: {} })
    expect(third.counts?.['candidatesRecomputed']).toBe(1)
  })
})
