import { describe, expect, it, vi } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { DocumentStore, upsertSource } from '../../src/db/documents.ts'
import { SketchStore } from '../../src/db/sketches.ts'
import { analyseDocument, type DedupeLimits } from '../../src/ingest/dedupe.ts'
import type { DocumentInput } from '../../src/ingest/document.ts'
import { BatchWriter } from '../../src/ingest/writer.ts'
import { postingsWithReposts, setJaccard, shingles, stringJaccard } from './corpus.ts'

function posting(id: string, body: string, title = 'Role'): DocumentInput {
  return { externalId: id, kind: 'posting', title, body, postedAt: '2023-04-05T00:00:00.000Z', dateEstimated: false }
}

function writerFor(db: Db, sourceId: string, ingest: Record<string, unknown> = {}, limits: DedupeLimits = {}): BatchWriter {
  const config = parseConfig({ ingest: { batchSize: 100, ...ingest } })
  upsertSource(db, { id: sourceId, kind: 'jsonl', location: `${sourceId}.jsonl` })
  return new BatchWriter(db, config, sourceId, null, () => {}, limits)
}

function rows(db: Db): { id: number; external_id: string; duplicate_of: number | null; dup_similarity: number | null }[] {
  return db.prepare('SELECT id, external_id, duplicate_of, dup_similarity FROM documents ORDER BY id').all() as never
}

describe('near-duplicate reposts (generated set with known pairs)', () => {
  it('finds reposts at or above the threshold and links them to the root; nothing below it is linked', () => {
    const db = openDb(':memory:')
    // edits of 1..6 words in ~160 give Jaccard from ~0.97 down to ~0.85, on both sides of 0.9
    const { lines, copies } = postingsWithReposts(42, 2500, 0.12, [1, 2, 3, 4, 6])
    const w = writerFor(db, 'gen')
    for (const l of lines) w.add(posting(l.identifier, l.description, l.title), { file: 'gen' })
    w.flush()
    const stored = rows(db)
    expect(stored).toHaveLength(lines.length)
    // truth, computed on shingle strings: for each posting, its best earlier match at J >= 0.9
    const rootOf = (i: number): number => {
      const d = stored[i]!.duplicate_of
      return d === null ? i : d - 1
    }
    // dedupe compares title and description together, and so does the truth
    const full = (i: number) => `${lines[i]!.title}\n${lines[i]!.description}`
    let truePairs = 0
    let found = 0
    for (const [i, orig] of copies) {
      if (stringJaccard(full(i), full(orig), 4) < 0.9) continue
      truePairs++
      if (stored[i]!.duplicate_of !== null && rootOf(i) === rootOf(orig)) found++
    }
    // precision, checked on shingle strings: every linked posting has an earlier posting of the same
    // root (the one it matched) at J >= 0.9, and no posting without a planted twin is linked
    const cluster = new Map<number, number[]>()
    stored.forEach((_, i) => cluster.set(rootOf(i), [...(cluster.get(rootOf(i)) ?? []), i]))
    let unsupported = 0
    stored.forEach((r, i) => {
      if (r.duplicate_of === null) return
      const earlier = cluster.get(rootOf(i))!.filter((k) => k < i)
      if (!earlier.some((k) => stringJaccard(full(i), full(k), 4) >= 0.9)) unsupported++
    })
    const plantedIds = new Set(copies.keys())
    const spurious = stored.filter((r, i) => r.duplicate_of !== null && !plantedIds.has(i)).length
    expect(truePairs).toBeGreaterThan(100)
    // recall: LSH misses a J = 0.9 pair with probability (1 - 0.9^6)^10 ~ 5e-4
    expect(found / truePairs).toBeGreaterThanOrEqual(0.99)
    // precision: candidates are verified exactly, so no posting without a planted twin is linked
    expect(spurious).toBe(0)
    expect(unsupported).toBe(0)
    // every link points at a root, and its similarity is the exact Jaccard against the matched posting
    for (const r of stored) {
      if (r.duplicate_of === null) continue
      expect(stored[r.duplicate_of - 1]!.duplicate_of).toBeNull()
      expect(r.dup_similarity!).toBeGreaterThanOrEqual(0.9)
      expect(r.dup_similarity!).toBeLessThanOrEqual(1)
    }
  })

  it('gives the same decisions as a brute-force search over all earlier postings (exact Jaccard)', () => {
    const db = openDb(':memory:')
    const { lines } = postingsWithReposts(7, 300, 0.2, [1, 2, 3, 5])
    const w = writerFor(db, 'bf')
    for (const l of lines) w.add(posting(l.identifier, l.description, l.title), { file: 'bf' })
    w.flush()
    const stored = rows(db)
    const sets = lines.map((l) => shingles(`${l.title}\n${l.description}`, 4))
    const root: number[] = []
    let disagreements = 0
    for (let i = 0; i < lines.length; i++) {
      let best = -1
      let bestJ = 0
      for (let k = 0; k < i; k++) {
        const j = setJaccard(sets[i]!, sets[k]!)
        const r = root[k]!
        if (j >= 0.9 && (j > bestJ || (j === bestJ && r < best))) [best, bestJ] = [r, j]
      }
      root.push(best === -1 ? i : best)
      const expected = best === -1 ? null : best + 1
      if (stored[i]!.duplicate_of !== expected) disagreements++
      else if (expected !== null) expect(stored[i]!.dup_similarity).toBeCloseTo(bestJ, 12)
    }
    // only an LSH miss (probability ~5e-4 per pair at J = 0.9) may differ
    expect(disagreements).toBeLessThanOrEqual(1)
  })
})

describe('exact duplicates', () => {
  it('same normalised text across sources is a repost with similarity 1 (case, spacing, punctuation ignored)', () => {
    const db = openDb(':memory:')
    const a = writerFor(db, 'a')
    a.add(posting('1', 'Forklift driver, early shifts at the north depot.', 'Driver'), { file: 'a' })
    a.flush()
    const b = writerFor(db, 'b')
    b.add(posting('x', 'FORKLIFT driver -- early   shifts at the North depot!', 'driver'), { file: 'b' })
    b.flush()
    expect(rows(db).map((r) => [r.duplicate_of, r.dup_similarity])).toEqual([
      [null, null],
      [1, 1],
    ])
    expect(b.counts).toMatchObject({ read: 1, new: 0, duplicate: 1, exactText: 1 })
  })

  it('the same source and external id is stored once, however often it is read', () => {
    const db = openDb(':memory:')
    const w = writerFor(db, 'a')
    for (let round = 0; round < 3; round++) w.add(posting('same-id', `Text version ${round} of a cooperative role.`), { file: 'a' })
    w.flush()
    expect(rows(db)).toHaveLength(1)
    expect(w.counts).toMatchObject({ read: 3, new: 1, duplicate: 2, alreadyStored: 2 })
  })

  it('requests are never deduplicated by text: two people asking for the same thing are two signals', () => {
    const db = openDb(':memory:')
    const w = writerFor(db, 'r')
    for (const team of ['north', 'south']) {
      w.add({ externalId: team, kind: 'request', title: '', body: 'Excel pivot tables course please', postedAt: '2023-01-01T09:00:00.000Z', dateEstimated: false, team }, { file: 'r' })
    }
    w.flush()
    expect(rows(db).map((r) => r.duplicate_of)).toEqual([null, null])
    expect((db.prepare('SELECT COUNT(*) FROM document_bands').pluck().get() as number)).toBe(0)
  })
})

describe('index settings', () => {
  it('a change of MinHash settings rebuilds signatures and bands, and later reposts are still found', () => {
    const db = openDb(':memory:')
    const { lines, copies } = postingsWithReposts(5, 300, 0, [1])
    const w1 = writerFor(db, 's')
    for (const l of lines) w1.add(posting(l.identifier, l.description), { file: 's' })
    w1.finish()
    expect(copies.size).toBe(0)
    const before = db.prepare('SELECT COUNT(*) FROM document_bands').pluck().get() as number
    expect(before).toBe(300 * 10)
    // 128 hashes in 16 bands: a different index; a repost of posting 17 must still be found
    const w2 = writerFor(db, 's2', { dedupe: { numHashes: 128, bands: 16 } })
    expect(db.prepare('SELECT COUNT(*) FROM document_bands').pluck().get()).toBe(300 * 16)
    expect((db.prepare('SELECT length(signature) FROM documents WHERE id = 1').pluck().get() as number)).toBe(128 * 4)
    const words = lines[17]!.description.split(' ')
    words[3] = 'changed'
    w2.add(posting('again', words.join(' ')), { file: 's2' })
    w2.flush()
    expect(rows(db).at(-1)!.duplicate_of).toBe(18)
  })
})

describe('band rows written in sorted runs', () => {
  const bandsOf = (db: Db) => db.prepare('SELECT key, document_id FROM document_bands ORDER BY key, document_id').all()
  const through = (db: Db) => db.prepare("SELECT value FROM settings WHERE key = 'ingest.bands.through'").pluck().get()

  it('a run that ends without writing its band rows (killed) leaves them to the next writer, which finds reposts of those postings', () => {
    const { lines } = postingsWithReposts(9, 400, 0, [1])
    // the clean run: every row written at the end
    const clean = openDb(':memory:')
    const c = writerFor(clean, 's')
    for (const l of lines) c.add(posting(l.identifier, l.description), { file: 's' })
    c.finish()
    expect(bandsOf(clean)).toHaveLength(400 * 10)
    expect(through(clean)).toBe('400')

    // the killed run: batches committed (documents, signatures) but the band rows never written
    const db = openDb(':memory:')
    const k = writerFor(db, 's')
    for (const l of lines.slice(0, 250)) k.add(posting(l.identifier, l.description), { file: 's' })
    k.flush()
    expect(bandsOf(db)).toHaveLength(0)
    expect(through(db)).toBe('0')
    // the next writer takes the stored postings' keys from their signatures: a repost of posting
    // 200 (stored by the killed run) is found before any of their rows are written
    const next = writerFor(db, 's')
    const words = lines[199]!.description.split(' ')
    words[5] = 'changed'
    next.add(posting('again', words.join(' ')), { file: 's' })
    next.flush()
    expect(rows(db).at(-1)!.duplicate_of).toBe(200)
    for (const l of lines.slice(250)) next.add(posting(l.identifier, l.description), { file: 's' })
    next.finish()
    // same band rows as the clean run, plus the repost's
    const got = bandsOf(db) as { key: number; document_id: number }[]
    expect(got.filter((r) => r.document_id !== 251)).toEqual((bandsOf(clean) as { key: number; document_id: number }[]).map((r) => (r.document_id > 250 ? { ...r, document_id: r.document_id + 1 } : r)).sort((a, b) => a.key - b.key || a.document_id - b.document_id))
    expect(through(db)).toBe('401')
  })

  it('a rolled-back batch drops its keys but keeps the earlier batches\' pending keys', () => {
    const db = openDb(':memory:')
    const { lines } = postingsWithReposts(3, 300, 0, [1])
    const w = writerFor(db, 's')
    for (const l of lines.slice(0, 200)) w.add(posting(l.identifier, l.description), { file: 's' })
    w.flush()
    // the next batch fails inside its transaction (a trigger refuses the insert)
    db.exec("CREATE TEMP TRIGGER refuse BEFORE INSERT ON documents WHEN NEW.external_id = 'p-3-250' BEGIN SELECT RAISE(ABORT, 'refused'); END")
    for (const l of lines.slice(200, 240)) w.add(posting(l.identifier, l.description), { file: 's' })
    expect(() => {
      for (const l of lines.slice(240, 300)) w.add(posting(l.identifier, l.description), { file: 's' })
    }).toThrow(/refused/)
    db.exec('DROP TRIGGER refuse')
    const w2 = writerFor(db, 's')
    const stored = db.prepare('SELECT COUNT(*) FROM documents').pluck().get() as number
    expect(stored).toBe(200)
    w2.finish()
    expect(bandsOf(db)).toHaveLength(200 * 10)
    // a repost of posting 150 (pending when the batch failed) is still found
    const words = lines[149]!.description.split(' ')
    words[2] = 'changed'
    w.add(posting('again', words.join(' ')), { file: 's' })
    w.finish()
    expect(rows(db).at(-1)!.duplicate_of).toBe(150)
  })
})

describe('candidates dismissed by their sketches', () => {
  // reposts with 1 to 14 edited words in about 160: those with 10 to 14 (J about 0.45 to 0.6) share band keys below the threshold
  const { lines } = postingsWithReposts(11, 600, 0.7, [1, 2, 3, 10, 11, 12, 13, 14])
  const run = (limits: DedupeLimits, failAt?: string, storedSketches = true) => {
    const db = openDb(':memory:')
    // without stored sketches: each one is deleted as it is written
    if (!storedSketches) db.exec('CREATE TEMP TRIGGER no_sketch AFTER INSERT ON document_sketches BEGIN DELETE FROM document_sketches WHERE id = NEW.id; END')
    const reads = vi.spyOn(DocumentStore.prototype, 'signature')
    const w = writerFor(db, 's', {}, limits)
    if (failAt) {
      // a batch that fails inside its transaction, then is read again: what it stored is forgotten
      db.exec(`CREATE TEMP TRIGGER refuse BEFORE INSERT ON documents WHEN NEW.external_id = '${failAt}' BEGIN SELECT RAISE(ABORT, 'refused'); END`)
      expect(() => {
        for (const l of lines) w.add(posting(l.identifier, l.description, l.title), { file: 's' })
      }).toThrow(/refused/)
      db.exec('DROP TRIGGER refuse')
      const stored = db.prepare('SELECT COUNT(*) FROM documents').pluck().get() as number
      for (const l of lines.slice(stored)) w.add(posting(l.identifier, l.description, l.title), { file: 's' })
    } else {
      for (const l of lines) w.add(posting(l.identifier, l.description, l.title), { file: 's' })
    }
    w.finish()
    const n = reads.mock.calls.length
    reads.mockRestore()
    return { rows: rows(db), reads: n }
  }

  it('decide as the full signatures do, reading fewer of them', () => {
    // every candidate in the cache of recent postings; then sketches in memory only; then sketches
    // in the table only; then neither
    const cached = run({})
    const sketched = run({ cacheSize: 1 }, undefined, false)
    const stored = run({ cacheSize: 1, sketchBytes: 1 })
    const read = run({ cacheSize: 1, sketchBytes: 1 }, undefined, false)
    expect(cached.rows.filter((r) => r.duplicate_of !== null && r.dup_similarity! < 1).length).toBeGreaterThan(40)
    expect(cached.reads).toBe(0)
    expect(sketched.rows).toEqual(cached.rows)
    expect(stored.rows).toEqual(cached.rows)
    expect(read.rows).toEqual(cached.rows)
    // the sketches dismiss candidates below the threshold; those left are read for their signature and root
    expect(read.reads).toBeGreaterThan(200)
    // (460 and 316 when written: most of these candidates are reposts that pass the estimate)
    expect(sketched.reads).toBeLessThan(read.reads * 0.8)
    // the stored sketches dismiss the same candidates as those in memory
    expect(stored.reads).toBe(sketched.reads)
  })

  it('a rolled-back batch leaves no sketch behind (its ids are reused by other postings)', () => {
    const sketched = run({ cacheSize: 1 }, lines[350]!.identifier)
    expect(sketched.rows).toEqual(run({}).rows)
    const stored = run({ cacheSize: 1, sketchBytes: 1 }, lines[350]!.identifier)
    expect(stored.rows).toEqual(run({}).rows)
  })
})

describe('the band filter', () => {
  it('loaded from the database, it leaves the decisions as they are and looks up only the bands it holds', () => {
    const { lines } = postingsWithReposts(13, 500, 0.4, [1, 2, 3, 10, 12, 14])
    const run = (filterAfter: number | undefined) => {
      const db = openDb(':memory:')
      const first = writerFor(db, 's')
      for (const l of lines.slice(0, 250)) first.add(posting(l.identifier, l.description, l.title), { file: 's' })
      // a request with a later posting's text: not a repost of it
      first.add({ ...posting('req', lines[260]!.description, lines[260]!.title), kind: 'request' }, { file: 's' })
      first.finish()
      const queries = vi.spyOn(DocumentStore.prototype, 'bandDocuments')
      const next = writerFor(db, 's', {}, { filterAfter })
      for (const l of lines.slice(250)) next.add(posting(l.identifier, l.description, l.title), { file: 's' })
      // exact reposts of stored postings, from the table and from this run
      next.add(posting('again-10', lines[10]!.description, lines[10]!.title), { file: 's' })
      next.add(posting('again-400', lines[400]!.description, lines[400]!.title), { file: 's' })
      next.finish()
      const n = queries.mock.calls.length
      queries.mockRestore()
      return { rows: rows(db), queries: n }
    }
    const filtered = run(0)
    const plain = run(undefined)
    expect(filtered.rows).toEqual(plain.rows)
    expect(plain.rows.at(-2)).toMatchObject({ duplicate_of: 11, dup_similarity: 1 })
    expect(plain.rows.at(-1)!.dup_similarity).toBe(1)
    expect(plain.rows.filter((r) => r.duplicate_of !== null && r.dup_similarity! < 1).length).toBeGreaterThan(20)
    // without the filter every distinct band key of each batch (100 postings) is looked up once,
    // the exact reposts' too (their keys are read with their batch's, before they are decided)
    const later = [...lines.slice(250), lines[10]!, lines[400]!]
    const params = parseConfig({}).ingest.dedupe
    let distinct = 0
    for (let from = 0; from < later.length; from += 100) {
      const keys = new Set<string>()
      for (const l of later.slice(from, from + 100)) analyseDocument({ kind: 'posting', title: l.title, body: l.description }, params).keys!.forEach((k, band) => keys.add(`${band}:${k}`))
      distinct += keys.size
    }
    expect(distinct).toBeLessThan(252 * 10)
    expect(plain.queries).toBe(distinct)
    expect(filtered.queries).toBeLessThan(plain.queries / 4)
  })
})

describe('a batch reads what is stored for it at once', () => {
  // a second import whose reposts' originals were stored by an earlier run: its candidates' band
  // rows and sketches come from the tables
  const { lines } = postingsWithReposts(23, 700, 0.5, [1, 2, 3, 10, 12, 14])
  const run = (batchSize: number) => {
    const db = openDb(':memory:')
    const first = writerFor(db, 's', { batchSize })
    for (const l of lines.slice(0, 350)) first.add(posting(l.identifier, l.description, l.title), { file: 's' })
    first.finish()
    const bands = vi.spyOn(DocumentStore.prototype, 'bandDocuments')
    const sketches = vi.spyOn(SketchStore.prototype, 'sketch')
    const next = writerFor(db, 's', { batchSize })
    for (const l of lines.slice(350)) next.add(posting(l.identifier, l.description, l.title), { file: 's' })
    next.finish()
    const result = { rows: rows(db), bandCalls: bands.mock.calls.map((c) => c[0]), sketchCalls: sketches.mock.calls.map((c) => c[0]) }
    bands.mockRestore()
    sketches.mockRestore()
    return result
  }

  it('decides as reading them posting by posting does, reading each key and sketch once a batch, in order', () => {
    // one posting a batch reads what each decision reads, as before the batch reads
    const alone = run(1)
    const batched = run(1000)
    expect(batched.rows).toEqual(alone.rows)
    const later = alone.rows.slice(350)
    expect(later.filter((r) => r.duplicate_of !== null && r.duplicate_of <= 350 && r.dup_similarity! < 1).length).toBeGreaterThan(10)
    // the 350 later postings go in one batch: each stored key and each older candidate's sketch is
    // read once, in ascending order, and no decision reads another
    const ascending = (xs: number[]) => xs.every((x, i) => i === 0 || xs[i - 1]! < x)
    expect(ascending(batched.bandCalls)).toBe(true)
    expect(ascending(batched.sketchCalls)).toBe(true)
    expect(batched.sketchCalls.every((id) => id <= 350)).toBe(true)
    expect(batched.sketchCalls.length).toBeGreaterThan(30)
    // posting by posting, keys shared by several later postings and candidates of several are read again
    expect(batched.bandCalls.length).toBeLessThan(alone.bandCalls.length)
    expect(batched.sketchCalls.length).toBeLessThan(alone.sketchCalls.length)
  })
})
