/**
 * A read-only database and a full disk, made without privileges: a read-only file (run as an
 * unprivileged user when the tests run as root, since root ignores file modes), `PRAGMA
 * max_page_count` (SQLite's own "database or disk is full") and a file size limit (RLIMIT_FSIZE via
 * util-linux prlimit: writes past it fail with EFBIG, as on a full disk). The run must fail with one
 * clear line, leave the database intact (integrity_check ok, results unchanged), and a later run with
 * room to write must end exactly where a run that never failed ends. A `tides` child process gets
 * the page limit through a preload module (fullDiskEnv), so the command's own exit code and printed
 * line are checked, for the ingest, map, fit and plan stages.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { loadConfig } from '../../src/config.ts'
import { describeDbFailure, openDb } from '../../src/db/connection.ts'
import { runPipeline } from '../../src/pipeline.ts'
import {
  BOOKKEEPING_TABLES,
  changedTables,
  copyDb,
  fullDiskEnv,
  hasPrlimit,
  integrity,
  makeWorkspace,
  query,
  resultHash,
  startTides,
  tides,
  waitFor,
  type Workspace,
} from './helpers.ts'

/** documents per ingest transaction in this file's workspace */
const BATCH = 50
/** pages the database may still grow by when the disk is made full (as many as the pipeline's own bookkeeping needs before a stage) */
const SPARE_PAGES = 8

let ws: Workspace
/** the database before any run, and after one clean `run all` */
let pristine: string
let cleanHash: string

beforeAll(async () => {
  ws = makeWorkspace({ n: 800, months: 12, name: 'disk', batchSize: BATCH })
  openDb(ws.db).close()
  pristine = path.join(ws.dir, 'pristine.db')
  copyDb(ws.db, pristine)
  const clean = await tides([...ws.args, 'run', 'all'])
  expect(clean.code, clean.stderr).toBe(0)
  expect(query<{ n: number }>(ws.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n).toBe(800)
  cleanHash = resultHash(ws.db)
})
afterAll(() => ws?.cleanup())

/** A fresh copy of a database (the pristine one unless named) under its own config (same sources and settings). */
function copyWorkspace(name: string, from: string = pristine): { db: string; args: string[] } {
  const db = path.join(ws.dir, `${name}.db`)
  copyDb(from, db)
  const config = JSON.parse(fs.readFileSync(ws.config, 'utf8')) as Record<string, unknown>
  const configFile = path.join(ws.dir, `${name}.config.json`)
  fs.writeFileSync(configFile, JSON.stringify({ ...config, db: path.basename(db) }))
  return { db, args: ['--config', configFile] }
}

function sha256(file: string): string {
  return crypto.createHash('sha256').update(fs.readFileSync(file)).digest('hex')
}

/**
 * The command's error is one line, its last, and the only one it prints as `tides <command>: ...`
 * (the lines before it are the run's progress and per-stage report).
 */
function expectOneClearLine(stderr: string, pattern: RegExp): void {
  const lines = stderr.trim().split('\n')
  const last = lines[lines.length - 1]!
  expect(last).toMatch(pattern)
  expect(lines.filter((l) => /^tides [a-z]+: /.test(l))).toEqual([last])
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

  /*
   * A file or folder made read-only while a run has the database open cannot fail that run: file
   * modes are checked when a file is opened (POSIX open(2)), and the run writes through descriptors
   * opened before (the database and its -wal and -shm files; the map's worker threads open read-only
   * connections, which need only read access to the file and the -shm the run already has open).
   * What this test holds the command to: the run in progress ends with exactly a clean run's results
   * and an intact file, and the next command is refused at open with one clear line, changing no byte.
   * Writes that fail mid-run the way a read-only filesystem makes them fail (the kernel remounting
   * it read-only after disk errors: EROFS, which SQLite reports as SQLITE_IOERR_WRITE like any write
   * error other than ENOSPC) cannot be arranged portably: it needs root and a block device, since
   * `mount -o remount,ro` is refused ("mount point is busy") while a file on it is open for writing.
   * The file size limit tests below make writes fail with EFBIG through the same SQLite path.
   */
  it('made read-only while a run has it open: that run ends with a clean run\'s results, the next is refused at open and changes nothing', async () => {
    const dir = path.join(ws.dir, 'readonly-late')
    fs.mkdirSync(dir)
    const db = path.join(dir, 'ro.db')
    copyDb(pristine, db)
    fs.copyFileSync(ws.postings, path.join(dir, 'postings.jsonl'))
    const configFile = path.join(dir, 'tides.config.json')
    fs.writeFileSync(configFile, JSON.stringify({ ...(JSON.parse(fs.readFileSync(ws.config, 'utf8')) as Record<string, unknown>), db: 'ro.db' }))
    fs.chmodSync(ws.dir, 0o755)
    // root ignores file modes: run as the unprivileged user "nobody", who owns the files
    const asUser = process.getuid?.() === 0 ? { uid: 65534, gid: 65534 } : {}
    if (asUser.uid !== undefined) for (const f of [dir, db, configFile, path.join(dir, 'postings.jsonl')]) fs.chownSync(f, asUser.uid, asUser.gid)
    try {
      const run = startTides(['--config', configFile, 'run', 'all'], { cwd: dir, ...asUser })
      // the map has started: the documents are stored, mentions not yet
      await waitFor(() => /map: bulk map of/.test(run.stderr()) || run.child.exitCode !== null, 60_000, 'the map stage to start')
      fs.chmodSync(db, 0o444)
      fs.chmodSync(dir, 0o555)
      expect(run.child.exitCode).toBeNull() // still running when its file and folder became read-only
      expect(run.stderr()).not.toMatch(/^fit /m)
      const r = await run.done
      expect(r.code, r.stderr).toBe(0)
      expect(integrity(db)).toBe('ok')
      expect(resultHash(db)).toBe(cleanHash)
      // the folder kept the run from removing its -wal and -shm files at the end; the next command
      // finds the file read-only and leaves all three as they are
      const files = [db, `${db}-wal`, `${db}-shm`].filter((f) => fs.existsSync(f))
      const before = files.map(sha256)
      const next = await tides(['--config', configFile, 'run', 'all'], { cwd: dir, ...asUser })
      expect(next.code, next.stderr).toBe(1)
      expectOneClearLine(next.stderr, /^tides run: database .*ro\.db cannot be written \(attempt to write a readonly database\): the file or its folder is read-only; nothing was changed$/)
      expect(files.map(sha256)).toEqual(before)
      expect(resultHash(db)).toBe(cleanHash)
    } finally {
      fs.chmodSync(dir, 0o755)
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
    expect(ingest.error).toMatch(/^corpus: database \S+ cannot grow \(database or disk is full\): the disk is full; the interrupted work was rolled back$/)
    db.close()
    expect(integrity(copy.db)).toBe('ok')
    expectIngestRolledBack(copy.db)
    // the same limit on the command: its exit code and the line it prints
    const r = await tides([...copy.args, 'run', 'ingest', '--only'], { env: fullDiskEnv(copy.db, SPARE_PAGES) })
    expect(r.code, r.stderr).toBe(1)
    expectOneClearLine(r.stderr, /^tides run: ingest failed: corpus: database \S+ cannot grow \(database or disk is full\): the disk is full; the interrupted work was rolled back$/)
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
    // the sources of the config and the dedupe index's settings are synced before any work (they
    // may change); every result table stays as it was
    const results = (file: string) => resultHash(file, [...BOOKKEEPING_TABLES, 'sources', 'settings'])
    const before = results(copy.db)
    const r = await tides([...copy.args, 'run', 'ingest', '--only'], { fileSizeLimit: 256 * 1024 })
    expect(r.code).toBe(1)
    expectOneClearLine(r.stderr, /^tides run: (ingest failed: corpus: database \S+: disk I\/O error \(SQLITE_IOERR\w*\): the disk may be full, a file size limit reached or the disk failing; the interrupted work was rolled back|database .* disk I\/O error)/)
    expect(integrity(copy.db)).toBe('ok')
    expectIngestRolledBack(copy.db)
    expect(results(copy.db)).toBe(before)
    const again = await tides([...copy.args, 'run', 'all'])
    expect(again.code, again.stderr).toBe(0)
    expect(resultHash(copy.db)).toBe(cleanHash)
  })

  it.skipIf(!hasPrlimit())('a file size limit hit in the middle of a run: exactly the committed batches stay, the rest lands on the next run, same result', async () => {
    const copy = copyWorkspace('fsize-mid')
    const r = await tides([...copy.args, 'run', 'ingest', '--only'], { fileSizeLimit: 2 * 1024 * 1024 })
    expect(r.code).toBe(1)
    expectOneClearLine(r.stderr, /^tides run: ingest failed: corpus: database \S+: disk I\/O error \(SQLITE_IOERR\w*\): the disk may be full, a file size limit reached or the disk failing; the interrupted work was rolled back$/)
    expect(integrity(copy.db)).toBe('ok')
    // The batch rule (README, Ingest: "Each batch of documents, its links, the source's resume point
    // and its documents.ingested event commit together"; DEVELOPERS, Ingest; ingest/writer.ts): the
    // batches committed before the fault stay, whole, and nothing of the batch that hit it.
    const events = query<{ payload_json: string }>(copy.db, "SELECT payload_json FROM events WHERE type = 'documents.ingested' ORDER BY id")
    const reads = events.map((e) => (JSON.parse(e.payload_json) as { read: number }).read)
    const committed = reads.length * BATCH
    expect(reads.length).toBeGreaterThan(0) // the fault came after a commit, not at once (that is the test above)
    expect(reads).toEqual(reads.map(() => BATCH))
    expect(committed).toBeLessThan(800)
    // precisely the documents of the first `committed` lines, in order
    const raw = fs.readFileSync(ws.postings)
    const lines = raw.toString('utf8').split('\n').slice(0, 800)
    const stored = query<{ external_id: string }>(copy.db, 'SELECT external_id FROM documents ORDER BY id').map((d) => d.external_id)
    expect(stored).toEqual(lines.slice(0, committed).map((l) => (JSON.parse(l) as { identifier: string }).identifier))
    // the resume point is the byte after the last committed line
    const [source] = query<{ cursor: string }>(copy.db, "SELECT cursor FROM sources WHERE id = 'corpus'")
    const cursor = JSON.parse(source!.cursor) as { offset: number; line: number }
    expect(cursor.offset).toBe(Buffer.byteLength(lines.slice(0, committed).join('\n') + '\n'))
    expect(cursor.line).toBe(committed + 1)
    // no signature sketch or band row of a document that is not stored
    expect(query(copy.db, 'SELECT COUNT(*) AS n FROM document_sketches WHERE id NOT IN (SELECT id FROM documents)')).toEqual([{ n: 0 }])
    for (const table of ['document_bands', 'document_bands_recent']) {
      expect(query(copy.db, `SELECT COUNT(*) AS n FROM ${table} WHERE document_id NOT IN (SELECT id FROM documents)`)).toEqual([{ n: 0 }])
    }
    const again = await tides([...copy.args, 'run', 'all'])
    expect(again.code, again.stderr).toBe(0)
    expect(resultHash(copy.db)).toBe(cleanHash)
  })
})

/*
 * The disk made full while the map, fit or plan stage runs (`tides run <stage> --only` on a copy of
 * the database as it is just before that stage). Each stage writes its results in one transaction
 * (the map: one per 10,000 documents, so one here), so nothing of it may stay. Left out of the
 * "unchanged" comparison, as records of how the work went rather than its results: `job_runs` (the
 * failed run is recorded: checked to be exactly one new row, failed, with the error), `locks` (the
 * pipeline lock's lease, held only during a run) and `matcher_cache` (the map stores the compiled
 * matcher in a transaction of its own and goes without it when that fails; its bytes may differ
 * between equal runs). Not left out: `events` and `event_cursors` (a failed stage announces nothing
 * and its cursor stays where it was), `settings` and every result table.
 */
describe('disk full during the map, fit and plan stages', () => {
  /** the database just before each stage, and just after that stage ran with room to write */
  const before: Record<'map' | 'fit' | 'plan', string> = { map: '', fit: '', plan: '' }
  const after: Record<'map' | 'fit' | 'plan', string> = { map: '', fit: '', plan: '' }
  const EXCLUDED = ['job_runs', 'locks', 'matcher_cache']

  beforeAll(async () => {
    const chain = copyWorkspace('stages')
    const step = async (stage: string, snapshot?: string): Promise<void> => {
      const r = await tides([...chain.args, 'run', stage, '--only'])
      expect(r.code, r.stderr).toBe(0)
      if (snapshot) copyDb(chain.db, path.join(ws.dir, `${snapshot}.db`))
    }
    // the taxonomy loaded first (a map with nothing to map), so that the map's fault falls in its
    // mentions transaction and not in the taxonomy load ahead of it
    await step('map')
    await step('ingest', 'before-map')
    await step('map', 'after-map')
    await step('fit', 'after-fit')
    await step('ability', 'before-plan')
    await step('plan', 'after-plan')
    before.map = path.join(ws.dir, 'before-map.db')
    after.map = before.fit = path.join(ws.dir, 'after-map.db')
    after.fit = path.join(ws.dir, 'after-fit.db')
    before.plan = path.join(ws.dir, 'before-plan.db')
    after.plan = path.join(ws.dir, 'after-plan.db')
  })

  const lastRun = (file: string) => query<{ stage: string; status: string; error: string | null }>(file, 'SELECT stage, status, error FROM job_runs ORDER BY id DESC LIMIT 1')[0]
  const runCount = (file: string) => query<{ n: number }>(file, 'SELECT COUNT(*) AS n FROM job_runs')[0]!.n
  const schema = (file: string) => query(file, "SELECT type, name, tbl_name, sql FROM sqlite_master WHERE name NOT LIKE 'sqlite_%' ORDER BY type, name")

  /**
   * Runs `stage` on a copy of its "before" database with the disk full, checks the command's exit code
   * and line, the file's integrity and that nothing but the excluded bookkeeping changed; then runs it
   * again with room and checks it ends exactly where the clean run ended, having changed `own` (so the
   * comparison above would have seen them change).
   * @returns the failed command's stderr
   */
  async function failThenRecover(stage: 'map' | 'fit' | 'plan', own: readonly string[]): Promise<string> {
    const copy = copyWorkspace(`${stage}-full`, before[stage])
    const r = await tides([...copy.args, 'run', stage, '--only'], { env: fullDiskEnv(copy.db, SPARE_PAGES) })
    expect(r.code, r.stderr).toBe(1)
    expectOneClearLine(r.stderr, new RegExp(`^tides run: ${stage} failed: database \\S+ cannot grow \\(database or disk is full\\): the disk is full; the interrupted work was rolled back$`))
    expect(integrity(copy.db)).toBe('ok')
    expect(changedTables(before[stage], copy.db).filter((t) => !EXCLUDED.includes(t))).toEqual([])
    expect(schema(copy.db)).toEqual(schema(before[stage]))
    expect(runCount(copy.db)).toBe(runCount(before[stage]) + 1)
    expect(lastRun(copy.db)).toEqual({ stage, status: 'failed', error: expect.stringMatching(/^database \S+ cannot grow \(database or disk is full\): the disk is full/) })
    // room again: the same stage completes, with the clean run's result
    const again = await tides([...copy.args, 'run', stage, '--only'])
    expect(again.code, again.stderr).toBe(0)
    expect(lastRun(copy.db)).toMatchObject({ stage, status: 'ok' })
    expect(integrity(copy.db)).toBe('ok')
    expect(resultHash(copy.db)).toBe(resultHash(after[stage]))
    expect(changedTables(before[stage], copy.db)).toEqual(expect.arrayContaining([...own]))
    return r.stderr
  }

  it('map: fails with one clear line, leaves mentions and demand aggregates as they were and the by-concept index built, and a rerun maps exactly', async () => {
    const stderr = await failThenRecover('map', ['mentions', 'demand_counts', 'demand_totals', 'unmapped_documents'])
    // the bulk-map path: the index was dropped outside the failed transaction and built again after it
    expect(stderr).toMatch(/^map: bulk map of \d+ documents/m)
    expect(stderr).toMatch(/^map: built the mentions-by-concept index$/m)
    const copy = path.join(ws.dir, 'map-full.db')
    expect(query(copy, "SELECT name FROM sqlite_master WHERE type = 'index' AND name = 'mentions_concept'")).toEqual([{ name: 'mentions_concept' }])
  })

  it('fit: fails with one clear line, leaves the curves as they were, and a rerun fits exactly', async () => {
    await failThenRecover('fit', ['curves'])
  })

  it('plan: fails with one clear line, leaves plan_outputs as they were, and a rerun plans exactly', async () => {
    await failThenRecover('plan', ['plan_outputs'])
  })
})
