import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { recentBandRows } from '../../src/db/bands.ts'
import { type Db, openDb } from '../../src/db/connection.ts'
import { upsertSource } from '../../src/db/documents.ts'
import type { DedupeLimits } from '../../src/ingest/dedupe.ts'
import { ensureDedupeIndex } from '../../src/ingest/reindex.ts'
import { BatchWriter } from '../../src/ingest/writer.ts'
import { type PostingLine, postingsWithReposts } from './corpus.ts'

// reposts with 1 to 3 edited words (found) and 10 to 12 (sharing band keys, below the threshold)
const { lines } = postingsWithReposts(31, 700, 0.5, [1, 2, 3, 10, 11, 12])

interface Setup {
  limits: DedupeLimits
  /** keep no sketches in the table (each is deleted as it is written): the documents are read instead */
  noStoredSketches?: boolean
}

interface Step {
  size: number
  /** the run is killed after its batches committed, before it wrote its band rows */
  killed: boolean
}

const writer = (db: Db, limits: DedupeLimits) => {
  upsertSource(db, { id: 's', kind: 'jsonl', location: 's.jsonl' })
  return new BatchWriter(db, parseConfig({ ingest: { batchSize: 50 } }), 's', null, () => {}, limits)
}
const add = (w: BatchWriter, l: PostingLine) =>
  w.add({ externalId: l.identifier, kind: 'posting', title: l.title, body: l.description, postedAt: '2024-02-01T00:00:00.000Z', dateEstimated: false }, { file: 's' })

/** Ingests the corpus in runs; returns the decisions, the set of band rows and what the levels did. */
function ingest(steps: readonly Step[], setup: Setup) {
  const db = openDb(':memory:')
  if (setup.noStoredSketches) db.exec('CREATE TEMP TRIGGER no_sketch AFTER INSERT ON document_sketches BEGIN DELETE FROM document_sketches WHERE id = NEW.id; END')
  let at = 0
  let recentUsed = false
  let merged = false
  for (const step of steps) {
    const w = writer(db, setup.limits)
    for (const l of lines.slice(at, at + step.size)) add(w, l)
    at += step.size
    const before = recentBandRows(db)
    if (step.killed) w.flush()
    else w.finish()
    const after = recentBandRows(db)
    if (after > 0) recentUsed = true
    if (before > 0 && after === 0) merged = true
  }
  const w = writer(db, setup.limits)
  for (const l of lines.slice(at)) add(w, l)
  w.finish()
  const decisions = db.prepare('SELECT id, external_id, duplicate_of, dup_similarity FROM documents ORDER BY id').all()
  const bands = db.prepare('SELECT key, document_id FROM document_bands UNION SELECT key, document_id FROM document_bands_recent ORDER BY 1, 2').raw().all()
  const sketches = db.prepare('SELECT COUNT(*) FROM document_sketches').pluck().get() as number
  const signatures = db.prepare('SELECT COUNT(*) FROM documents WHERE signature IS NOT NULL').pluck().get() as number
  db.close()
  return { decisions, bands, recentUsed, merged, sketches, signatures }
}

describe('recent band rows and stored sketches leave every decision as it was', () => {
  // one big level and no stored sketches: the structures as they were before migration 6
  const plain: Setup = { limits: { recentFraction: 0 }, noStoredSketches: true }
  const expected = ingest([], plain)

  it('finds reposts in this corpus (the comparison means something)', () => {
    const near = (expected.decisions as { duplicate_of: number | null; dup_similarity: number | null }[]).filter((d) => d.duplicate_of !== null && d.dup_similarity! < 1)
    expect(near.length).toBeGreaterThan(60)
  })

  it('for any split into runs, killed or not, and any level size', () => {
    const steps = fc.array(fc.record({ size: fc.integer({ min: 5, max: 120 }), killed: fc.boolean() }), { minLength: 1, maxLength: 8 })
    let sawRecent = 0
    let sawMerge = 0
    fc.assert(
      fc.property(fc.integer({ min: 150, max: 400 }), steps, fc.constantFrom(1 / 8, 1 / 3, 1), fc.boolean(), (first, rest, fraction, filtered) => {
        const runs: Step[] = [{ size: first, killed: false }, ...rest]
        // no cache of recent postings and no sketches in memory: every candidate's sketch comes from the table
        const limits: DedupeLimits = { recentFraction: fraction, cacheSize: 1, sketchBytes: 1, filterAfter: filtered ? 0 : undefined }
        const got = ingest(runs, { limits })
        expect(got.decisions).toEqual(expected.decisions)
        expect(got.bands).toEqual(expected.bands)
        // every signature has its sketch
        expect(got.sketches).toBe(got.signatures)
        if (got.recentUsed) sawRecent++
        if (got.merged) sawMerge++
      }),
      { numRuns: 12, seed: 2026 },
    )
    // the runs exercised both the recent level and its merge
    expect(sawRecent).toBeGreaterThan(3)
    expect(sawMerge).toBeGreaterThan(0)
  })

  it('a reindex puts every band row in the big level and rewrites the sketches', () => {
    const db = openDb(':memory:')
    const w1 = writer(db, {})
    for (const l of lines.slice(0, 300)) add(w1, l)
    w1.finish()
    const w2 = writer(db, {})
    for (const l of lines.slice(300, 320)) add(w2, l)
    w2.finish()
    expect(recentBandRows(db)).toBeGreaterThan(0)
    const params = { threshold: 0.9, numHashes: 64, bands: 8, shingleSize: 5 }
    expect(ensureDedupeIndex(db, params)).toBeGreaterThan(0)
    expect(recentBandRows(db)).toBe(0)
    expect(db.prepare('SELECT COUNT(*) FROM document_bands').pluck().get()).toBe(db.prepare('SELECT COUNT(*) FROM documents WHERE signature IS NOT NULL').pluck().get() as number * 8)
    // each sketch is the low bytes of the new signature
    const row = db.prepare('SELECT d.signature, s.sketch FROM documents d JOIN document_sketches s ON s.id = d.id WHERE d.id = 5').get() as { signature: Buffer; sketch: Buffer }
    expect(row.sketch.length).toBe(64)
    expect([...row.sketch]).toEqual(Array.from({ length: 64 }, (_, i) => row.signature[i * 4]))
    db.close()
  })
})
