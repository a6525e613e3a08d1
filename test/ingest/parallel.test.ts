import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { contentHash, openDb } from '../../src/db/connection.ts'
import { listRuns } from '../../src/db/runs.ts'
import { importDocuments } from '../../src/ingest/import.ts'
import { ingestSources } from '../../src/ingest/stage.ts'
import { postingsWithReposts, toJsonLines } from './corpus.ts'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-parallel-'))
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))
const TABLES = ['documents', 'document_bands', 'sources']

describe('parsing on a worker thread', () => {
  it('stores exactly what the single-threaded path stores, bad lines and cursor included', async () => {
    const { lines } = postingsWithReposts(31, 2500, 0.1, [1, 2, 5])
    const text = toJsonLines(lines).split('\n')
    text.splice(700, 0, '{"@type": "JobPosting", "identifier": "bad-1", "datePosted": "2023-13-45"}', 'not json at all')
    const file = path.join(dir, 'p.jsonl')
    fs.writeFileSync(file, text.join('\n'))
    const hashes: string[] = []
    for (const min of [null, 0]) {
      const db = openDb(path.join(dir, `p-${min}.db`))
      const [r] = await ingestSources(db, parseConfig({ ingest: { parseWorkerMinBytes: min, batchSize: 700 }, sources: [{ id: 'p', kind: 'jsonl', location: file }] }))
      expect(r!.counts).toMatchObject({ read: 2502, rejected: 2, new: 2500 - r!.counts.duplicate })
      expect(JSON.parse(listRuns(db, 1)[0]!.details_json)).toMatchObject({ parseWorker: min === 0, problemCount: 2 })
      hashes.push(contentHash(db, TABLES))
      db.close()
    }
    expect(hashes[1]).toBe(hashes[0])
  })

  it('resumes from the cursor of an earlier (single-threaded) run and ends as one clean run', async () => {
    const { lines } = postingsWithReposts(32, 2000, 0.1, [1, 3])
    const all = toJsonLines(lines)
    const file = path.join(dir, 'grow.jsonl')
    const clean = openDb(path.join(dir, 'clean.db'))
    fs.writeFileSync(file, all)
    await ingestSources(clean, parseConfig({ sources: [{ id: 'g', kind: 'jsonl', location: file }] }))
    // the file first holds 800 lines, then grows to all 2,000: the second run reads only the rest
    const db = openDb(path.join(dir, 'grown.db'))
    fs.writeFileSync(file, all.split('\n').slice(0, 800).join('\n') + '\n')
    await ingestSources(db, parseConfig({ sources: [{ id: 'g', kind: 'jsonl', location: file }] }))
    fs.writeFileSync(file, all)
    const [r] = await ingestSources(db, parseConfig({ ingest: { parseWorkerMinBytes: 0 }, sources: [{ id: 'g', kind: 'jsonl', location: file }] }))
    expect(r!.counts.read).toBe(1200)
    expect(contentHash(db, ['documents', 'document_bands'])).toBe(contentHash(clean, ['documents', 'document_bands']))
    db.close()
    clean.close()
  })

  it('import: the check on two threads reports the same problems by line as one thread, strict refuses, skip-bad stores the same', async () => {
    const { lines } = postingsWithReposts(33, 3000, 0.1, [1, 2])
    const text = toJsonLines(lines).split('\n')
    // bad lines in both halves of the file, one right at the middle, and a blank line
    text.splice(2400, 0, '{"@type": "JobPosting", "identifier": "late", "title": 7}')
    text.splice(1500, 0, 'not json at all', '')
    text.splice(10, 0, '{"@type": "JobPosting", "identifier": "early"}')
    const file = path.join(dir, 'imp.jsonl')
    fs.writeFileSync(file, text.join('\n'))
    const results: { problems: string; read: number; hash?: string }[] = []
    for (const min of [null, 0]) {
      const config = parseConfig({ ingest: { parseWorkerMinBytes: min, batchSize: 900 } })
      const strict = openDb(path.join(dir, `imp-strict-${min}.db`))
      const refused = await importDocuments(strict, config, 'postings', file, { skipBad: false })
      expect(refused.refused).toBe(true)
      expect(strict.prepare('SELECT COUNT(*) FROM documents').pluck().get()).toBe(0)
      strict.close()
      const db = openDb(path.join(dir, `imp-${min}.db`))
      const r = await importDocuments(db, config, 'postings', file, { skipBad: true })
      expect(r).toMatchObject({ refused: false, read: 3003, skipped: 3, imported: 3000 })
      results.push({ problems: JSON.stringify(refused.problems), read: refused.read, hash: contentHash(db, ['documents', 'document_bands']) })
      db.close()
    }
    expect(JSON.parse(results[0]!.problems).map((p: { line: number; column?: string }) => [p.line, p.column])).toEqual([[11, 'datePosted'], [1502, undefined], [2404, 'title']])
    expect(results[1]).toEqual(results[0])
  })
})
