import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import Database from 'better-sqlite3'
import { afterEach, describe, expect, it } from 'vitest'
import { DbError, PAGE_SIZE, contentHash, migrate, openDb, schemaVersion } from '../../src/db/connection.ts'
import { MIGRATIONS, SCHEMA_VERSION } from '../../src/db/migrations.ts'

const dirs: string[] = []
function tmpFile(name = 'tides.db'): string {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-mig-'))
  dirs.push(dir)
  return path.join(dir, name)
}
afterEach(() => {
  for (const d of dirs.splice(0)) fs.rmSync(d, { recursive: true, force: true })
})

const EXPECTED_TABLES = [
  'sources', 'documents', 'mentions', 'concepts', 'labels', 'concept_broader', 'demand_counts', 'demand_totals', 'curves', 'people', 'roles',
  'items', 'responses', 'abilities', 'coverage', 'courses', 'plan_outputs', 'job_runs', 'events',
]

describe('migrations', () => {
  it('gives a new database 8 KiB pages and leaves an existing database its page size', () => {
    const fresh = tmpFile()
    const db = openDb(fresh)
    expect(db.pragma('page_size', { simple: true })).toBe(PAGE_SIZE)
    db.close()
    const old = tmpFile('old.db')
    const raw = new Database(old)
    raw.pragma('page_size = 4096')
    raw.exec('CREATE TABLE keep_me (x)')
    raw.close()
    const reopened = openDb(old)
    expect(reopened.pragma('page_size', { simple: true })).toBe(4096)
    expect(reopened.prepare("SELECT name FROM sqlite_master WHERE name = 'keep_me'").get()).toBeTruthy()
    reopened.close()
  })

  it('create every table from an empty file, with WAL, foreign keys and synchronous=NORMAL', () => {
    const file = tmpFile()
    const db = openDb(file)
    expect(schemaVersion(db)).toBe(SCHEMA_VERSION)
    const tables = (db.prepare("SELECT name FROM sqlite_master WHERE type='table'").all() as { name: string }[]).map((r) => r.name)
    for (const t of EXPECTED_TABLES) expect(tables).toContain(t)
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal')
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1)
    expect(db.pragma('synchronous', { simple: true })).toBe(1) // 1 = NORMAL
    db.close()
  })

  it('upgrade a version-1 database in place, keeping its rows', () => {
    const file = tmpFile()
    const v1 = openDb(file, { upTo: 1 })
    expect(schemaVersion(v1)).toBe(1)
    v1.prepare("INSERT INTO people(person_id, role, team) VALUES ('p1', 'analyst', 'north')").run()
    expect(v1.prepare("SELECT name FROM sqlite_master WHERE name = 'curves_state'").get()).toBeUndefined()
    v1.close()
    const db = openDb(file)
    expect(schemaVersion(db)).toBe(SCHEMA_VERSION)
    expect(db.prepare("SELECT name FROM sqlite_master WHERE name = 'curves_state'").get()).toBeDefined()
    expect(db.prepare('SELECT role FROM people').get()).toEqual({ role: 'analyst' })
    db.close()
  })

  it('refuse a database written by a newer version, with a message that says what to do', () => {
    const file = tmpFile()
    const raw = new Database(file)
    raw.pragma(`user_version = ${SCHEMA_VERSION + 5}`)
    raw.close()
    expect(() => openDb(file)).toThrow(DbError)
    expect(() => openDb(file)).toThrow(/newer than this skill-tides .*upgrade skill-tides/)
  })

  it('roll back a failing migration entirely and leave the version unchanged', () => {
    const db = openDb(':memory:')
    const broken = [...MIGRATIONS, { version: SCHEMA_VERSION + 1, name: 'broken', sql: 'CREATE TABLE x(a); INSERT INTO nowhere VALUES (1);' }]
    expect(() => migrate(db, SCHEMA_VERSION + 1, broken)).toThrow(/migration \d+ \(broken\) failed/)
    expect(schemaVersion(db)).toBe(SCHEMA_VERSION)
    expect(db.prepare("SELECT name FROM sqlite_master WHERE name = 'x'").get()).toBeUndefined()
    db.close()
  })

  it('enforce foreign keys', () => {
    const db = openDb(':memory:')
    expect(() => db.prepare("INSERT INTO mentions(document_id, concept_id, count, via) VALUES (99, 'none', 1, 'text')").run()).toThrow(/FOREIGN KEY/)
    db.close()
  })

  it('content hash ignores wall-clock columns but not data', () => {
    const a = openDb(':memory:')
    const b = openDb(':memory:')
    for (const db of [a, b]) db.prepare("INSERT INTO people VALUES ('p1', 'analyst', 'north')").run()
    expect(contentHash(a)).toBe(contentHash(b))
    // a setting that records when work ran is a wall-clock value too; other settings are data
    a.prepare("INSERT INTO settings VALUES ('candidates.computed_at', '2026-01-01T00:00:00Z')").run()
    b.prepare("INSERT INTO settings VALUES ('candidates.computed_at', '2026-02-02T00:00:00Z')").run()
    expect(contentHash(a)).toBe(contentHash(b))
    a.prepare("INSERT INTO settings VALUES ('flat', '1')").run()
    b.prepare("INSERT INTO settings VALUES ('flat', '2')").run()
    expect(contentHash(a)).not.toBe(contentHash(b))
    b.prepare("UPDATE settings SET value = '1' WHERE key = 'flat'").run()
    expect(contentHash(a)).toBe(contentHash(b))
    b.prepare("UPDATE people SET team = 'south'").run()
    expect(contentHash(a)).not.toBe(contentHash(b))
  })
})
