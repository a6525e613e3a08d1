/**
 * The ability stage skips its work when nothing it reads changed since its last successful run
 * (migration 12's `ability_inputs` counter, the UTC day of `now`, its config section), and runs
 * again after any insert, update or delete in people, roles, items, responses or the imported
 * abilities. Data: a small fictional Fernhollow Cooperative workforce, imported through the real
 * CSV importers.
 */
import { describe, it, expect } from 'vitest'
import { contentHash, openDb, type Db } from '../../src/db/connection.ts'
import { parseConfig, type Config } from '../../src/config.ts'
import { importTableText, type TableKind } from '../../src/inputs/tables.ts'
import { readStageMark } from '../../src/db/runs.ts'
import { readAbilityInputs } from '../../src/db/workforce.ts'
import { runAbility, abilityStage } from '../../src/ability/stage.ts'
import type { StageResult } from '../../src/stage.ts'

const NOW = new Date('2026-01-15T09:00:00Z')
const CONFIG = parseConfig({})

function load(db: Db, kind: TableKind, csv: string): void {
  const result = importTableText(db, kind, csv, `${kind}.csv`)
  expect(result.problems, `${kind} import`).toEqual([])
  expect(result.refused).toBe(false)
}

/** 40 people in two roles, 6 items of sql with parameters, one spare item nobody answered. */
function seeded(): Db {
  const db = openDb(':memory:')
  load(db, 'items', ['item_id,skill_id,a,b,c', ...Array.from({ length: 6 }, (_, j) => `sql-${j},sql,1.1,${(-1 + 0.4 * j).toFixed(1)},`), 'spare-0,sql,1,0,'].join('\n'))
  load(db, 'people', ['person_id,role,team', ...Array.from({ length: 40 }, (_, i) => `fh-${i},${i % 3 ? 'analyst' : 'steward'},mill`)].join('\n'))
  load(db, 'roles', 'role,skill_id,required_theta\nanalyst,sql,0\nsteward,sql,0.5\n')
  const rows: string[] = []
  for (let i = 0; i < 40; i++) for (let j = 0; j < 6; j++) rows.push(`fh-${i},sql-${j},${(i * 7 + j * 3) % 5 < 3 ? 1 : 0},2025-06-01`)
  load(db, 'responses', ['person_id,item_id,response,taken_at', ...rows].join('\n'))
  load(db, 'abilities', 'person_id,skill_id,theta,se,assessed_at\nfh-1,sql,1.5,0.3,2025-12-01\nfh-2,sql,-0.5,0.3,2023-01-01\n')
  return db
}

function eventCount(db: Db): number {
  return (db.prepare("SELECT COUNT(*) AS n FROM events WHERE type = 'ability.updated'").get() as { n: number }).n
}

/** Every table, every column (times included): a skip must leave the database byte-identical. */
const everything = (db: Db) => contentHash(db, undefined, [])

function run(db: Db, options: { now?: Date; calibrate?: boolean; rebuild?: boolean; config?: Config } = {}): StageResult {
  return runAbility(db, options.config ?? CONFIG, { now: options.now ?? NOW, calibrate: options.calibrate, rebuild: options.rebuild })
}

function expectSkipped(result: StageResult): void {
  expect(result.counts['skipped']).toBe(1)
  expect(result.summary).toMatch(/^inputs unchanged since the last run at \d{4}-\d\d-\d\dT[\d:.]+Z: abilities and coverage kept$/)
}

function expectRan(result: StageResult): void {
  expect(result.counts['skipped']).toBeUndefined()
  expect(result.summary).toMatch(/abilities estimated/)
}

describe('ability stage: skip when its inputs are unchanged', () => {
  it('a second run with nothing changed writes nothing, emits nothing, and reports the previous counts', () => {
    const db = seeded()
    const first = run(db)
    expectRan(first)
    expect(first.counts['estimated']).toBe(40)
    const before = everything(db)
    const events = eventCount(db)
    const second = run(db, { now: new Date('2026-01-15T23:59:59Z') })
    expectSkipped(second)
    expect(second.counts).toEqual({ ...first.counts, skipped: 1 })
    expect(everything(db)).toBe(before)
    expect(eventCount(db)).toBe(events)
  })

  // each change goes through the importers (insert, update) or by hand (delete: nothing in the program deletes these rows)
  const changes: Array<[string, (db: Db) => void]> = [
    ['people insert', (db) => load(db, 'people', 'person_id,role,team\nfh-new,analyst,mill\n')],
    ['people update', (db) => load(db, 'people', 'person_id,role,team\nfh-3,steward,mill\n')],
    ['people delete', (db) => db.prepare("DELETE FROM people WHERE person_id = 'fh-4'").run()],
    ['roles insert', (db) => load(db, 'roles', 'role,skill_id,required_theta\nanalyst,python,0.2\n')],
    ['roles update', (db) => load(db, 'roles', 'role,skill_id,required_theta\nanalyst,sql,0.4\n')],
    ['roles delete', (db) => db.prepare("DELETE FROM roles WHERE role = 'steward'").run()],
    ['items insert', (db) => load(db, 'items', 'item_id,skill_id,a,b,c\nsql-new,sql,1,1,\n')],
    ['items update', (db) => load(db, 'items', 'item_id,skill_id,a,b,c\nsql-0,sql,1.4,-1,\n')],
    ['items delete', (db) => db.prepare("DELETE FROM items WHERE item_id = 'spare-0'").run()],
    ['responses insert', (db) => load(db, 'responses', 'person_id,item_id,response,taken_at\nfh-0,sql-0,0,2025-11-01\n')],
    ['responses update', (db) => load(db, 'responses', 'person_id,item_id,response,taken_at\nfh-0,sql-0,0,2025-06-01\n')],
    ['responses delete', (db) => db.prepare("DELETE FROM responses WHERE person_id = 'fh-5' AND item_id = 'sql-2'").run()],
    ['abilities insert', (db) => load(db, 'abilities', 'person_id,skill_id,theta,se,assessed_at\nfh-6,sql,0.7,0.4,2025-10-01\n')],
    ['abilities update', (db) => load(db, 'abilities', 'person_id,skill_id,theta,se,assessed_at\nfh-1,sql,1.9,0.3,2025-12-10\n')],
    ['abilities delete', (db) => db.prepare("DELETE FROM abilities WHERE person_id = 'fh-2' AND origin = 'import'").run()],
  ]
  it.each(changes)('runs again after a %s, then skips', (_name, change) => {
    const db = seeded()
    expectRan(run(db))
    expectSkipped(run(db))
    const events = eventCount(db)
    const counter = readAbilityInputs(db)
    change(db)
    expect(readAbilityInputs(db)).toBeGreaterThan(counter)
    expectRan(run(db))
    expect(eventCount(db)).toBe(events + 1)
    expectSkipped(run(db))
  })

  it('its own writes (estimates, coverage, calibration) never make the next run recompute', () => {
    const db = seeded()
    // items without parameters, so that --calibrate writes items
    load(db, 'items', 'item_id,skill_id,a,b,c\nsql-0,sql,,,\nsql-1,sql,,,\n')
    const counter = readAbilityInputs(db)
    expectRan(run(db, { calibrate: true, config: parseConfig({ ability: { calibration: { minResponses: 10 } } }) }))
    expect(readAbilityInputs(db)).toBe(counter)
    expect((db.prepare("SELECT COUNT(*) AS n FROM items WHERE origin = 'calibrated'").get() as { n: number }).n).toBeGreaterThan(0)
    expectSkipped(run(db, { config: parseConfig({ ability: { calibration: { minResponses: 10 } } }) }))
  })

  it('runs on a new UTC day, and when its config section changes', () => {
    const db = seeded()
    expectRan(run(db))
    expectSkipped(run(db, { now: new Date('2026-01-15T00:00:00Z') }))
    expectRan(run(db, { now: new Date('2026-01-16T00:00:00Z') }))
    expectSkipped(run(db, { now: new Date('2026-01-16T18:00:00Z') }))
    expectRan(run(db, { now: new Date('2026-01-16T18:00:00Z'), config: parseConfig({ ability: { staleAfterDays: 365 } }) }))
    expectSkipped(run(db, { now: new Date('2026-01-16T18:00:00Z'), config: parseConfig({ ability: { staleAfterDays: 365 } }) }))
    expectRan(run(db, { now: new Date('2026-01-16T18:00:00Z') }))
  })

  it('--calibrate and --rebuild always run, through the stage object too', async () => {
    const db = seeded()
    expectRan(run(db))
    const events = eventCount(db)
    expectRan(run(db, { calibrate: true }))
    expectRan(run(db, { calibrate: true }))
    expectRan(run(db, { rebuild: true }))
    expect(eventCount(db)).toBe(events + 3)
    const ctx = { db, config: CONFIG, log: () => {}, trigger: 'manual', options: { now: NOW.toISOString() } as Record<string, unknown> }
    expectSkipped(await abilityStage.run(ctx))
    expectRan(await abilityStage.run({ ...ctx, options: { ...ctx.options, rebuild: true } }))
  })

  it('a failing run leaves the old mark and results, so the next run recomputes', () => {
    const db = seeded()
    expectRan(run(db))
    const mark = readStageMark(db, 'ability')!
    const coverage = contentHash(db, ['coverage', 'abilities'], [])
    load(db, 'responses', 'person_id,item_id,response,taken_at\nfh-0,sql-1,1,2025-11-01\n')
    db.exec("CREATE TEMP TRIGGER coverage_fails BEFORE INSERT ON coverage BEGIN SELECT RAISE(ABORT, 'disk gone'); END")
    expect(() => run(db)).toThrow(/disk gone/)
    expect(readStageMark(db, 'ability')).toEqual(mark)
    expect(contentHash(db, ['coverage', 'abilities'], [])).toBe(coverage)
    db.exec('DROP TRIGGER coverage_fails')
    expectRan(run(db))
    expect(readStageMark(db, 'ability')!.inputs).toBe(readAbilityInputs(db))
    expectSkipped(run(db))
  })
})
