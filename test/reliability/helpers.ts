/**
 * Shared helpers of the reliability and soak tests: run the real `tides` command in a child process
 * (the TypeScript sources through tsx), build a small workspace with a config, a generated taxonomy
 * and postings from bench/corpus.ts, and compare databases.
 */
import { type ChildProcess, spawn } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import Database from 'better-sqlite3'
import { generatePostings, generateTaxonomy, plantedTrends, writeTaxonomyCsv, type CorpusTruth, type GeneratedTaxonomy } from '../../bench/corpus.ts'
import { contentHash } from '../../src/db/connection.ts'
import { TSX_LOADER_ARGS } from '../../bin/tsx-loader.js'

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..')
export const CLI = path.join(ROOT, 'src', 'cli.ts')

export interface Finished {
  code: number | null
  signal: NodeJS.Signals | null
  stdout: string
  stderr: string
  ms: number
}

export interface SpawnOpts {
  cwd?: string
  env?: NodeJS.ProcessEnv
  /** run as this user and group (only root may) */
  uid?: number
  gid?: number
  /** largest file the process may write, in bytes (needs prlimit) */
  fileSizeLimit?: number
}

/** Whether util-linux prlimit is installed (for file-size-limit tests). */
export function hasPrlimit(): boolean {
  return ['/usr/bin/prlimit', '/bin/prlimit', '/usr/local/bin/prlimit'].some((p) => fs.existsSync(p))
}

export interface Running {
  child: ChildProcess
  /** resolves when the process has exited */
  done: Promise<Finished>
  stdout(): string
  stderr(): string
}

/** Starts a TypeScript script under tsx in one process (its pid is the program's pid). */
export function startScript(script: string, args: readonly string[], opts: SpawnOpts = {}): Running {
  const started = performance.now()
  // tsx's loader in this very process (the tsx command would put a second process in between, and a
  // signal sent to it would not reach the program)
  const command = [process.execPath, ...TSX_LOADER_ARGS, script, ...args]
  // a file size limit (RLIMIT_FSIZE) through util-linux prlimit: writes past it fail with EFBIG
  if (opts.fileSizeLimit !== undefined) command.unshift('prlimit', `--fsize=${opts.fileSizeLimit}`, '--')
  const child = spawn(command[0]!, command.slice(1), {
    cwd: opts.cwd ?? ROOT,
    env: { ...process.env, NO_COLOR: '1', ...opts.env },
    stdio: ['ignore', 'pipe', 'pipe'],
    uid: opts.uid,
    gid: opts.gid,
  })
  let out = ''
  let err = ''
  child.stdout!.setEncoding('utf8').on('data', (d: string) => (out += d))
  child.stderr!.setEncoding('utf8').on('data', (d: string) => (err += d))
  const done = new Promise<Finished>((resolve, reject) => {
    child.once('error', reject)
    child.once('close', (code, signal) => resolve({ code, signal, stdout: out, stderr: err, ms: performance.now() - started }))
  })
  return { child, done, stdout: () => out, stderr: () => err }
}

/** Starts `tides ARGS...`. */
export function startTides(args: readonly string[], opts: SpawnOpts = {}): Running {
  return startScript(CLI, args, opts)
}

/** Runs `tides ARGS...` to the end. */
export function tides(args: readonly string[], opts: SpawnOpts = {}): Promise<Finished> {
  return startTides(args, opts).done
}

/** Resolves once `predicate` holds (polled), or rejects after `timeoutMs`. */
export async function waitFor(predicate: () => boolean, timeoutMs: number, what: string, everyMs = 20): Promise<void> {
  const deadline = Date.now() + timeoutMs
  while (!predicate()) {
    if (Date.now() > deadline) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`)
    await new Promise((r) => setTimeout(r, everyMs))
  }
}

export const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))

let taxonomyCache: { key: string; taxonomy: GeneratedTaxonomy } | null = null

/** A small generated taxonomy (the shipped concepts plus generated ones), cached per process. */
export function smallTaxonomy(concepts = 2000, seed = 7): GeneratedTaxonomy {
  const key = `${concepts}:${seed}`
  if (taxonomyCache?.key !== key) taxonomyCache = { key, taxonomy: generateTaxonomy({ concepts, labels: concepts * 4, seed }) }
  return taxonomyCache.taxonomy
}

export interface Workspace {
  dir: string
  db: string
  config: string
  postings: string
  taxonomyCsv: string
  truth: CorpusTruth
  /** arguments that point `tides` at this workspace */
  args: string[]
  cleanup(): void
}

/**
 * A temporary folder with tides.config.json (one JSON Lines source `corpus` over the postings file,
 * dashboard token set), a generated taxonomy CSV and `n` generated postings over `months` months.
 */
export function makeWorkspace(opts: { n: number; months?: number; seed?: number; concepts?: number; batchSize?: number; name?: string }): Workspace {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), `tides-${opts.name ?? 'rel'}-`))
  const taxonomy = smallTaxonomy(opts.concepts ?? 2000, opts.seed ?? 7)
  const taxonomyCsv = path.join(dir, 'taxonomy.csv')
  writeTaxonomyCsv(taxonomyCsv, taxonomy)
  const postings = path.join(dir, 'postings.jsonl')
  const chunks: Buffer[] = []
  const truth = generatePostings({ n: opts.n, months: opts.months ?? 24, seed: opts.seed ?? 7, taxonomy, trends: plantedTrends(taxonomy, opts.seed ?? 7) }, (b) => chunks.push(Buffer.from(b)))
  fs.writeFileSync(postings, Buffer.concat(chunks))
  const db = path.join(dir, 'tides.db')
  const config = path.join(dir, 'tides.config.json')
  fs.writeFileSync(
    config,
    JSON.stringify(
      {
        db: 'tides.db',
        dataDir: '.',
        sources: [{ id: 'corpus', kind: 'jsonl', location: 'postings.jsonl' }],
        ingest: { batchSize: opts.batchSize ?? 500 },
        // the small corpora here take the bulk-map path (index dropped, built at the end) and the
        // worker threads (reading the texts from the file, the candidate list computed alongside),
        // so kills hit them too
        taxonomy: { bulkMapMin: 100, workerThreshold: 100 },
        server: { token: 'reliability-test-token-0123456789' },
      },
      null,
      2,
    ),
  )
  return { dir, db, config, postings, taxonomyCsv, truth, args: ['--config', config], cleanup: () => fs.rmSync(dir, { recursive: true, force: true }) }
}

/** Copies a database file (after a checkpoint, so the copy is complete without its -wal file). */
export function copyDb(from: string, to: string): void {
  const db = new Database(from)
  db.pragma('wal_checkpoint(TRUNCATE)')
  db.close()
  fs.copyFileSync(from, to)
  for (const suffix of ['-wal', '-shm']) fs.rmSync(to + suffix, { force: true })
}

/** `PRAGMA integrity_check` of a database file: 'ok' or the problems. */
export function integrity(file: string): string {
  const db = new Database(file, { readonly: true })
  try {
    return (db.pragma('integrity_check') as { integrity_check: string }[]).map((r) => r.integrity_check).join('; ')
  } finally {
    db.close()
  }
}

/**
 * Tables whose rows record how the work went (runs, retries, cursors, locks) rather than its
 * results, and the compiled matcher cache (its bytes may differ between equal runs).
 */
export const BOOKKEEPING_TABLES = ['job_runs', 'events', 'event_cursors', 'locks', 'webhook_deliveries', 'matcher_cache']

/** contentHash of a database file over every table except the bookkeeping ones. */
export function resultHash(file: string, except: readonly string[] = BOOKKEEPING_TABLES): string {
  const db = new Database(file, { readonly: true })
  try {
    const tables = (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name").all() as { name: string }[])
      .map((r) => r.name)
      .filter((t) => !except.includes(t))
    return contentHash(db, tables)
  } finally {
    db.close()
  }
}

/** contentHash of each table of a database file, by table name. */
export function tableHashes(file: string): Record<string, string> {
  const db = new Database(file, { readonly: true })
  try {
    const tables = (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name").all() as { name: string }[]).map((r) => r.name)
    return Object.fromEntries(tables.map((t) => [t, contentHash(db, [t])]))
  } finally {
    db.close()
  }
}

/** Names of the tables whose contents differ between two database files. */
export function changedTables(a: string, b: string): string[] {
  const ha = tableHashes(a)
  const hb = tableHashes(b)
  return [...new Set([...Object.keys(ha), ...Object.keys(hb)])].filter((t) => ha[t] !== hb[t]).sort()
}

/** Rows of a query on a database file (read-only). */
export function query<T = Record<string, unknown>>(file: string, sql: string, ...params: unknown[]): T[] {
  const db = new Database(file, { readonly: true, fileMustExist: true })
  try {
    db.pragma('busy_timeout = 5000')
    return db.prepare(sql).all(...params) as T[]
  } finally {
    db.close()
  }
}

/**
 * The preload module of {@link fullDiskEnv} (CommonJS, loaded with `--require` before the program):
 * wraps better-sqlite3's `pragma` so that the first call on each writable connection to the named
 * file first sets `max_page_count` to the file's page count plus the spare pages.
 */
const FULL_DISK_PRELOAD = `'use strict'
const path = require('node:path')
const { createRequire } = require('node:module')
const Database = createRequire(path.join(process.env.TIDES_TEST_ROOT, 'package.json'))('better-sqlite3')
const target = process.env.TIDES_TEST_FULL_DB
const spare = Number(process.env.TIDES_TEST_SPARE_PAGES)
const pragma = Database.prototype.pragma
const seen = new WeakSet()
Database.prototype.pragma = function (...args) {
  if (!seen.has(this)) {
    seen.add(this)
    if (!this.readonly && !this.memory && path.resolve(this.name) === target) {
      pragma.call(this, 'max_page_count = ' + (pragma.call(this, 'page_count', { simple: true }) + spare))
    }
  }
  return pragma.apply(this, args)
}
`

/**
 * Environment (for {@link SpawnOpts}.env) under which a `tides` child process finds the disk full:
 * every writable connection it opens to `db` gets SQLite's `PRAGMA max_page_count` set to the file's
 * page count plus `sparePages`, so a write that needs more pages fails with SQLITE_FULL ("database or
 * disk is full"), the error a full disk gives, without privileges or a small filesystem. The pragma
 * holds only for the connection that sets it, so it is set inside the child by a preload module
 * (written next to `db`), on the first `pragma` call of the connection: openDb makes one at once.
 */
export function fullDiskEnv(db: string, sparePages: number): NodeJS.ProcessEnv {
  const preload = path.join(path.dirname(path.resolve(db)), 'full-disk-preload.cjs')
  fs.writeFileSync(preload, FULL_DISK_PRELOAD)
  return {
    NODE_OPTIONS: `${process.env.NODE_OPTIONS ?? ''} --require ${JSON.stringify(preload)}`.trim(),
    TIDES_TEST_ROOT: ROOT,
    TIDES_TEST_FULL_DB: path.resolve(db),
    TIDES_TEST_SPARE_PAGES: String(sparePages),
  }
}
