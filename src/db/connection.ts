/**
 * @module db/connection
 * Opens the one SQLite database (WAL, foreign keys, synchronous=NORMAL) and brings its schema up to
 * date. Everything else in src/db/ takes the `Db` handle this returns.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import Database from 'better-sqlite3'
import { MIGRATIONS, SCHEMA_VERSION, type Migration } from './migrations.ts'
import { registerSketchFunction } from './sketches.ts'

export type Db = Database.Database

/** Page size of new databases, in bytes. */
export const PAGE_SIZE = 8192

/** A database problem the user can act on (newer schema, unwritable file). */
export class DbError extends Error {
  override name = 'DbError'
}

export interface OpenOptions {
  /** open read-only (dashboard readers); no migrations are applied */
  readonly?: boolean
  /** apply migrations up to this version only (tests of the upgrade path) */
  upTo?: number
  /**
   * told before each migration of a database that already has a schema (a new one is created at
   * once): some rewrite a large table (migration 9 takes about 27 s at a million postings)
   */
  onMigrate?: (migration: { from: number; version: number; name: string }) => void
}

/**
 * Opens (creating if needed) the database at `file` and migrates it.
 * @param file path, or ':memory:'
 * @throws DbError when the file was written by a newer version of skill-tides
 * @example
 * const db = openDb(':memory:'); db.pragma('user_version', { simple: true }) // => 2
 */
export function openDb(file: string, options: OpenOptions = {}): Db {
  if (file !== ':memory:' && !options.readonly) {
    fs.mkdirSync(path.dirname(path.resolve(file)), { recursive: true })
  }
  let db: Db
  try {
    db = new Database(file, { readonly: options.readonly ?? false, fileMustExist: options.readonly ?? false })
  } catch (err) {
    throw new DbError(`cannot open database ${file}: ${(err as Error).message}`, { cause: err })
  }
  try {
    if (!options.readonly) {
      // a new database gets 8 KiB pages: a posting row (about 2.3 KB of text) left most of a 4 KiB
      // page unused (1.7 GB of 3.9 GB at a million postings); an existing one keeps its page size
      if ((db.pragma('page_count', { simple: true }) as number) === 0) db.pragma(`page_size = ${PAGE_SIZE}`)
      db.pragma('journal_mode = WAL')
      db.pragma('synchronous = NORMAL')
    }
    db.pragma('foreign_keys = ON')
    db.pragma('busy_timeout = 5000')
    // migration 6 computes the sketches of the stored signatures with it
    registerSketchFunction(db)
    if (!options.readonly) migrate(db, options.upTo ?? SCHEMA_VERSION, MIGRATIONS, options.onMigrate)
    else checkVersion(db, file)
  } catch (err) {
    db.close()
    throw err
  }
  return db
}

function checkVersion(db: Db, file: string): number {
  const current = db.pragma('user_version', { simple: true }) as number
  if (current > SCHEMA_VERSION) {
    throw new DbError(
      `database ${file} has schema version ${current}, newer than this skill-tides (${SCHEMA_VERSION}); ` +
        'upgrade skill-tides or point --db at another file',
    )
  }
  return current
}

/**
 * The line a command prints before a migration of an existing database (see OpenOptions.onMigrate).
 *
 * @example
 * ```ts
 * upgradeNotice('tides.db', { from: 8, version: 9, name: 'the map queue' })
 * // => 'database tides.db: upgrading from schema 8 to 9 (the map queue); a large database can take a while ...\n'
 * ```
 */
export function upgradeNotice(file: string, m: { from: number; version: number; name: string }): string {
  return `database ${file}: upgrading from schema ${m.from} to ${m.version} (${m.name}); a large database can take a while (up to about half a minute a step at a million postings); if stopped, the step is rolled back and runs again next time\n`
}

/**
 * Applies every migration above the database's `user_version`, each in its own transaction.
 * @returns the versions applied
 */
export function migrate(db: Db, upTo: number = SCHEMA_VERSION, migrations: readonly Migration[] = MIGRATIONS, onMigrate?: OpenOptions['onMigrate']): number[] {
  const current = checkVersion(db, db.name)
  const applied: number[] = []
  for (const m of migrations) {
    if (m.version <= current || m.version > upTo) continue
    if (current > 0) onMigrate?.({ from: applied.at(-1) ?? current, version: m.version, name: m.name })
    const step = db.transaction(() => {
      db.exec(m.sql)
      db.pragma(`user_version = ${m.version}`)
    })
    try {
      step()
    } catch (err) {
      throw new DbError(`migration ${m.version} (${m.name}) failed: ${(err as Error).message}`, { cause: err })
    }
    applied.push(m.version)
  }
  return applied
}

/**
 * A one-line explanation of a SQLite error the user can act on (read-only file, full disk, I/O
 * failure, damaged file, another process holding it), or null for any other error.
 */
export function describeDbFailure(err: unknown, file?: string): string | null {
  const code = (err as { code?: unknown } | null)?.code
  if (typeof code !== 'string' || !code.startsWith('SQLITE_')) return null
  const where = file ? `database ${file}` : 'the database'
  const why = (err as Error).message
  if (code.startsWith('SQLITE_READONLY')) return `${where} cannot be written (${why}): the file or its folder is read-only; nothing was changed`
  if (code === 'SQLITE_FULL') return `${where} cannot grow (${why}): the disk is full; the interrupted work was rolled back`
  if (code.startsWith('SQLITE_IOERR')) return `${where}: disk I/O error (${code}): the disk may be full, a file size limit reached or the disk failing; the interrupted work was rolled back`
  if (code.startsWith('SQLITE_CANTOPEN')) return `${where} cannot be opened (${why}): check that the file and its folder exist and are readable and writable`
  if (code === 'SQLITE_CORRUPT' || code === 'SQLITE_NOTADB') return `${where} is damaged or not a skill-tides database (${why})`
  if (code.startsWith('SQLITE_BUSY') || code.startsWith('SQLITE_LOCKED')) return `${where} is busy: another process kept it locked too long (${why}); try again`
  return null
}

/** The schema version recorded in the database. */
export function schemaVersion(db: Db): number {
  return db.pragma('user_version', { simple: true }) as number
}

/** Reads a value from the settings table. */
export function getSetting(db: Db, key: string): string | undefined {
  const row = db.prepare('SELECT value FROM settings WHERE key = ?').get(key) as { value: string } | undefined
  return row?.value
}

/** Writes a value to the settings table. */
export function setSetting(db: Db, key: string, value: string): void {
  db.prepare('INSERT INTO settings(key, value) VALUES (?, ?) ON CONFLICT(key) DO UPDATE SET value = excluded.value').run(key, value)
}

/**
 * A digest of every table's rows in primary-key order, for determinism and crash-safety tests.
 * Columns that record wall-clock times are left out by name, and so are settings whose key names a
 * time (`..._at`, e.g. when the candidate terms were last computed).
 */
export function contentHash(db: Db, tables?: readonly string[], ignoreColumns: readonly string[] = TIME_COLUMNS): string {
  const hash = crypto.createHash('sha256')
  const names =
    tables ??
    (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name").all() as { name: string }[]).map(
      (r) => r.name,
    )
  for (const name of names) {
    const cols = (db.prepare(`PRAGMA table_info(${JSON.stringify(name)})`).all() as { name: string }[])
      .map((c) => c.name)
      .filter((c) => !ignoreColumns.includes(c))
    if (cols.length === 0) continue
    const list = cols.map((c) => JSON.stringify(c)).join(', ')
    hash.update(`#${name}\n`)
    const where = name === 'settings' && ignoreColumns.length > 0 ? ` WHERE key NOT LIKE '%\\_at' ESCAPE '\\'` : ''
    for (const row of db.prepare(`SELECT ${list} FROM ${JSON.stringify(name)}${where} ORDER BY ${list}`).raw().iterate()) {
      hash.update(JSON.stringify(row))
      hash.update('\n')
    }
  }
  return hash.digest('hex')
}

const TIME_COLUMNS = [
  'created_at', 'ingested_at', 'updated_at', 'fitted_at', 'started_at', 'ended_at', 'at',
  'delivered_at', 'next_attempt_at', 'expires_at', 'pid', 'holder',
]

