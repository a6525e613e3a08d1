import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it, vi } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { setBandsThrough } from '../../src/db/bands.ts'
import { type Db, openDb, schemaVersion } from '../../src/db/connection.ts'
import { DocumentStore, deleteDocuments, upsertSource } from '../../src/db/documents.ts'
import { SketchStore } from '../../src/db/sketches.ts'
import { analyseDocument, indexSignature } from '../../src/ingest/dedupe.ts'
import { signatureToBytes } from '../../src/ingest/minhash.ts'
import { BatchWriter } from '../../src/ingest/writer.ts'
import { postingsWithReposts, rng } from '../ingest/corpus.ts'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-mig6-'))
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

const PARAMS = { threshold: 0.9, numHashes: 60, bands: 10, shingleSize: 4 }
// 300 originals stored at version 5, then 100 reposts of them with 1 to 3 edited words (found) or 10
// to 12 (sharing band keys, below the threshold)
const OLD = 300
const originals = postingsWithReposts(77, OLD, 0).lines
const rand = rng(78)
const reposts = Array.from({ length: 100 }, (_, i) => {
  const words = originals[Math.floor(rand() * OLD)]!.description.split(' ')
  const edits = [1, 2, 3, 10, 12][i % 5]!
  for (let k = 0; k < edits; k++) words[Math.floor(rand() * words.length)] = `edit${i}x${k}`
  return { identifier: `r-${i}`, title: 'Cooperative role', description: words.join(' '), datePosted: '2024-02-01' }
})
const lines = [...originals, ...reposts]

const doc = (i: number) => ({ title: lines[i]!.title, body: lines[i]!.description, kind: 'posting' as const })

/** A version-5 database holding the first OLD postings as the ingest of that version stored them (no decisions: all originals). */
function version5(file: string): void {
  const db = openDb(file, { upTo: 5 })
  upsertSource(db, { id: 's', kind: 'jsonl', location: 's.jsonl' })
  const band = db.prepare('INSERT INTO document_bands(key, document_id) VALUES (?, ?)')
  const insert = db.prepare("INSERT INTO documents(source_id, external_id, kind, title, body, posted_at, month, text_hash, signature) VALUES ('s', ?, 'posting', ?, ?, '2024-01-01T00:00:00.000Z', '2024-01', ?, ?)")
  db.transaction(() => {
    for (let i = 0; i < OLD; i++) {
      const a = analyseDocument(doc(i), PARAMS)
      const id = Number(insert.run(lines[i]!.identifier, doc(i).title, doc(i).body, a.textHash, a.signature ? signatureToBytes(a.signature) : null).lastInsertRowid)
      if (a.keys) for (const key of DocumentStore.storedKeys(a.keys)) band.run(key, id)
    }
    // a request: no signature, no sketch
    db.prepare("INSERT INTO documents(source_id, external_id, kind, title, body, posted_at, month, text_hash) VALUES ('s', 'req', 'request', '', 'a course please', '2024-01-01T00:00:00.000Z', '2024-01', 'x')").run()
    setBandsThrough(db, OLD + 1)
    db.prepare("INSERT INTO settings(key, value) VALUES ('ingest.dedupe.index', ?)").run(indexSignature(PARAMS))
  })()
  db.close()
}

function ingestRest(db: Db): { id: number; duplicate_of: number | null; dup_similarity: number | null }[] {
  upsertSource(db, { id: 's', kind: 'jsonl', location: 's.jsonl' })
  const w = new BatchWriter(db, parseConfig({ ingest: { batchSize: 50 } }), 's', null, () => {}, { cacheSize: 1 })
  for (const l of lines.slice(OLD)) w.add({ externalId: l.identifier, kind: 'posting', title: l.title, body: l.description, postedAt: '2024-02-01T00:00:00.000Z', dateEstimated: false }, { file: 's' })
  w.finish()
  return db.prepare(`SELECT id, duplicate_of, dup_similarity FROM documents WHERE id > ${OLD + 1} ORDER BY id`).all() as never
}

describe('migration 6: recent band rows and signature sketches', () => {
  it('upgrades a version-5 database with postings: a sketch for every signature, empty recent level', () => {
    const file = path.join(dir, 'up.db')
    version5(file)
    const db = openDb(file)
    expect(schemaVersion(db)).toBeGreaterThanOrEqual(6)
    expect(db.prepare('SELECT COUNT(*) FROM document_sketches').pluck().get()).toBe(OLD)
    expect(db.prepare('SELECT COUNT(*) FROM document_bands_recent').pluck().get()).toBe(0)
    // each sketch holds the low byte of each signature value, computed here independently
    const rows = db.prepare('SELECT d.signature, s.sketch FROM documents d JOIN document_sketches s ON s.id = d.id').all() as { signature: Buffer; sketch: Buffer }[]
    for (const r of rows) {
      const values = new Uint32Array(r.signature.buffer.slice(r.signature.byteOffset, r.signature.byteOffset + r.signature.length))
      expect([...r.sketch]).toEqual([...values].map((v) => v % 256))
    }
    db.close()
  })

  it('after the upgrade, new postings get the decisions of a database built at the new version, reading few signatures', () => {
    const upgraded = path.join(dir, 'decide.db')
    version5(upgraded)
    const db = openDb(upgraded)
    const reads = vi.spyOn(DocumentStore.prototype, 'signature')
    const got = ingestRest(db)
    const n = reads.mock.calls.length
    reads.mockRestore()
    db.close()
    // the same postings, all stored by the current ingest (with no sketches in the table: every candidate read)
    const fresh = openDb(path.join(dir, 'fresh.db'))
    fresh.exec('CREATE TEMP TRIGGER no_sketch AFTER INSERT ON document_sketches BEGIN DELETE FROM document_sketches WHERE id = NEW.id; END')
    upsertSource(fresh, { id: 's', kind: 'jsonl', location: 's.jsonl' })
    const w = new BatchWriter(fresh, parseConfig({ ingest: { batchSize: 50 } }), 's', null, () => {}, { cacheSize: 1 })
    for (const l of lines.slice(0, OLD)) w.add({ externalId: l.identifier, kind: 'posting', title: l.title, body: l.description, postedAt: '2024-01-01T00:00:00.000Z', dateEstimated: false }, { file: 's' })
    w.add({ externalId: 'req', kind: 'request', title: '', body: 'a course please', postedAt: '2024-01-01T00:00:00.000Z', dateEstimated: false }, { file: 's' })
    w.finish()
    // (the version-5 data has no reposts among the old postings, and neither has the corpus)
    expect(fresh.prepare('SELECT COUNT(*) FROM documents WHERE duplicate_of IS NOT NULL').pluck().get()).toBe(0)
    const readsFresh = vi.spyOn(DocumentStore.prototype, 'signature')
    const want = ingestRest(fresh)
    const nFresh = readsFresh.mock.calls.length
    readsFresh.mockRestore()
    fresh.close()
    expect(got).toEqual(want)
    expect(got.filter((r) => r.duplicate_of !== null && r.dup_similarity! < 1).length).toBeGreaterThan(10)
    // the candidates below the threshold are dismissed by their stored sketches (74 of 80 read when written)
    expect(n).toBeLessThan(nFresh)
  })

  it('a deleted document takes its sketch with it; a changed signature drops its sketch', () => {
    const file = path.join(dir, 'triggers.db')
    version5(file)
    const db = openDb(file)
    const sketches = new SketchStore(db)
    expect(sketches.sketch(3)).toBeDefined()
    db.transaction(() => deleteDocuments(db, [3]))()
    expect(sketches.sketch(3)).toBeUndefined()
    expect(sketches.sketch(4)).toBeDefined()
    db.prepare('UPDATE documents SET signature = NULL WHERE id = 4').run()
    expect(sketches.sketch(4)).toBeUndefined()
    // other columns leave the sketch alone
    db.prepare("UPDATE documents SET title = 'x' WHERE id = 5").run()
    expect(sketches.sketch(5)).toBeDefined()
    db.close()
  })
})
