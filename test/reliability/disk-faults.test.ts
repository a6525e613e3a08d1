/**
 * A read-only database and a full disk, made without privileges: a read-only file (run as an
 * unprivileged user when the tests run as root, since root ignores file modes), `PRAGMA
 * max_page_count` (SQLite's own "database or disk is full") and a file size limit (RLIMIT_FSIZE via
 * util-linux prlimit: writes past it fail with EFBIG, as on a full disk). The run must fail with one
 * clear line, leave the database intact (integrity_check ok, results unchanged), and a later run with
 * room to write must end exactly where a run that never failed ends.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { loadConfig } from '../../src/config.ts'
import { describeDbFailure, openDb } from '../../src/db/connection.ts'
import { runPipeline } from '../../src/pipeline.ts'
import { BOOKKEEPING_TABLES, changedTables, copyDb, hasPrlimit, integrity, makeWorkspace, query, resultHash, tides, type Workspace } from './helpers.ts'

let ws: Workspace
/** the database before any run, and after one clean `run all` */
let pristine: string
let cleanHash: string

beforeAll(async () => {
  ws = makeWorkspace({ n: 800, months: 12, name: 'disk', batchSize: 50 })
  openDb(ws.db).close()
  pristine = path.join(ws.dir, 'pristine.db')
  copyDb(ws.db, pristine)
  const clean = await tides([...ws.args, 'run', 'all'])
  expect(clean.code, clean.stderr).toBe(0)
  expect(query<{ n: number }>(ws.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n).toBe(800)
  cleanHash = resultHash(ws.db)
})
afterAll(() => ws?.cleanup())

/** A fresh copy of the pristine database under its own config (same sources and settings). */
function copyWorkspace(name: string): { db: string; args: string[] } {
  const db = path.join(ws.dir, `${name}.db`)
  copyDb(pristine, db)
  const config = JSON.parse(fs.readFileSync(ws.config, 'utf8')) as Record<string, unknown>
  const configFile = path.join(ws.dir, `${name}.config.json`)
  fs.writeFileSync(configFile, JSON.stringify({ ...config, db: path.basename(db) }))
  return { db, args: ['--config', configFile] }
}

function sha256(file: string): string {
  return crypto.createHash('sha256').update(fs.readFileSync(file)).digest('hex')
}

function expectOneClearLine(stderr: string, pattern: RegExp): void {
  const lines = stderr.trim().split('\n')
  const last = lines[lines.length - 1]!
  expect(last).toMatch(pattern)
  expect(stderr).not.toMatch(/^\s+at /m) // no stack trace
  expect(stderr).not.toMatch(/unexpected error/)
}

/**
 * After a failed ingest: no document, band or result table changed; only the run records, the outbox
 * bookkeeping, the registered source row (with no cursor: no progress claimed) and the recorded
 * dedupe-index settings may differ.
 */
function expectIngestRolledBack(file: string): void {
  const changed = changedTables(pristine, file).filter((t) => !BOOKKEEPING_TABLES.includes(t))
  expect(changed.filter((t) => t !== 'sources' && t !== 'settings')).toEqual([])
  const settings = (f: string) => query(f, "SELECT key, value FROM settings WHERE key <> 'ingest.dedupe.index' ORDER BY key")
  expect(settings(file)).toEqual(settings(pristine))
  expect(query(file, 'SELECT id, cursor FROM sources')).toEqual(changed.includes('sources') ? [{ id: 'corpus', cursor: null }] : [])
  expect(query(file, "SELECT COUNT(*) AS n FROM events WHERE type = 'documents.ingested'")).toEqual([{ n: 0 }])
}

describe('read-only database', () => {
  it('run, import and demo-free commands fail with one clear line and change no byte of the file', async () => {
    const roDir = path.join(ws.dir, 'readonly')
    fs.mkdirSync(roDir)
    const db = path.join(roDir, 'ro.db')
    copyDb(pristine, db)
    fs.copyFileSync(ws.postings, path.join(roDir, 'postings.jsonl'))
    const configFile = path.join(roDir, 'tides.config.json')
    fs.writeFileSync(configFile, JSON.stringify({ db: 'ro.db', dataDir: '.', sources: [{ id: 'corpus', kind: 'jsonl', location: 'postings.jsonl' }] }))
    const people = path.join(roDir, 'people.csv')
    fs.writeFileSync(people, 'person_id,role,team\np1,analyst,north\n')
    fs.chmodSync(db, 0o444)
    fs.chmodSync(roDir, 0o555)
    fs.chmodSync(ws.dir, 0o755)
    const before = sha256(db)
    // root ignores file modes: run as the unprivileged user "nobody" then
    const asUser = process.getuid?.() === 0 ? { uid: 65534, gid: 65534 } : {}
    try {
      for (const args of [['run', 'all'], ['import', 'people', people]]) {
        const r = await tides(['--config', configFile, ...args], { cwd: roDir, ...asUser })
        expect(r.code, r.stderr).toBe(1)
        expectOneClearLine(r.stderr, /^tides (run|import): database .*ro\.db cannot be (written|opened) \(.*\): .*read-only/)
      }
      expect(sha256(db)).toBe(before)
      expect(integrity(db)).toBe('ok')
    } finally {
      fs.chmodSync(roDir, 0o755)
      fs.chmodSync(db, 0o644)
    }
  })
})

describe('disk full', () => {
  it('PRAGMA max_page_count: the stage fails with "disk is full", results stay as they were, and the next run completes exactly', async () => {
    const copy = copyWorkspace('pagecount')
    const config = loadConfig({ file: copy.args[1] })
    const db = openDb(copy.db)
    const pages = db.pragma('page_count', { simple: true }) as number
    db.pragma(`max_page_count = ${pages + 8}`)
    const outcomes = await runPipeline(db, config, ['ingest'], { ripple: false })
    const ingest = outcomes.find((o) => o.stage === 'ingest')!
    expect(ingest.error).toMatch(/database or disk is full/)
    db.close()
    expect(integrity(copy.db)).toBe('ok')
    expectIngestRolledBack(copy.db)
    // room again: the next run picks up and ends where a clean run ends
    const again = await tides([...copy.args, 'run', 'all'])
    expect(again.code, again.stderr).toBe(0)
    expect(resultHash(copy.db)).toBe(cleanHash)
  })

  it('describes SQLITE_FULL, read-only and I/O errors in words the user can act on', () => {
    const db = openDb(':memory:')
    db.pragma(`max_page_count = ${(db.pragma('page_count', { simple: true }) as number) + 1}`)
    let caught: unknown
    try {
      db.prepare('INSERT INTO settings(key, value) VALUES (?, ?)').run('big', 'x'.repeat(100_000))
    } catch (err) {
      caught = err
    }
    expect((caught as { code?: string }).code).toBe('SQLITE_FULL')
    expect(describeDbFailure(caught, 'x.db')).toMatch(/^database x\.db cannot grow \(database or disk is full\): the disk is full/)
    expect(describeDbFailure(Object.assign(new Error('disk I/O error'), { code: 'SQLITE_IOERR_WRITE' }))).toMatch(/disk I\/O error \(SQLITE_IOERR_WRITE\)/)
    expect(describeDbFailure(new Error('plain'))).toBeNull()
  })

  it.skipIf(!hasPrlimit())('a file size limit hit at once: one clear line, results unchanged, the next run completes exactly', async () => {
    const copy = copyWorkspace('fsize-at-once')
    const before = resultHash(copy.db)
    const r = await tides([...copy.args, 'run', 'ingest', '--only'], { fileSizeLimit: 256 * 1024 })
    expect(r.code).toBe(1)
    expectOneClearLine(r.stderr, /^tides run: (ingest failed: corpus: disk I\/O error|database .* disk I\/O error)/)
    expect(integrity(copy.db)).toBe('ok')
    expectIngestRolledBack(copy.db)
    const again = await tides([...copy.args, 'run', 'all'])
    expect(again.code, again.stderr).toBe(0)
    expect(resultHash(copy.db)).toBe(cleanHash)
  })

  it.skipIf(!hasPrlimit())('a file size limit hit in the middle of a run: committed batches stay, the rest lands on the next run, same result', async () => {
    const copy = copyWorkspace('fsize-mid')
    const r = await tides([...copy.args, 'run', 'ingest', '--only'], { fileSizeLimit: 2 * 1024 * 1024 })
    expect(r.code).toBe(1)
    expectOneClearLine(r.stderr, /disk I\/O error/)
    expect(integrity(copy.db)).toBe('ok')
    const stored = query<{ n: number }>(copy.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n
    expect(stored).toBeLessThan(800)
    // every stored document was announced, and nothing that was not stored
    const events = query<{ payload_json: string }>(copy.db, "SELECT payload_json FROM events WHERE type = 'documents.ingested'")
    const announced = events.map((e) => JSON.parse(e.payload_json) as { read: number }).reduce((a, e) => a + e.read, 0)
    expect(announced).toBe(stored)
    const again = await tides([...copy.args, 'run', 'all'])
    expect(again.code, again.stderr).toBe(0)
    expect(resultHash(copy.db)).toBe(cleanHash)
  })
})
