/**
 * @module db/workforce
 * Storage of imported people, roles, items, responses, abilities and courses. Every write of
 * people, roles, items, responses and imported abilities moves the `ability_inputs` counter on
 * (migration 12), in the caller's transaction, so that the ability stage sees its inputs changed.
 */
import type Database from 'better-sqlite3'
import type { Db } from './connection.ts'

export interface PersonRow { person_id: string; role: string; team: string }
export interface RoleRow { role: string; skill_id: string; required_theta: number }
export interface ItemRow { item_id: string; skill_id: string; a: number | null; b: number | null; c: number | null }
export interface ResponseRow { person_id: string; item_id: string; response: number; taken_at: string }
export interface AbilityRow { person_id: string; skill_id: string; theta: number; se: number; assessed_at: string }
export interface CourseRow {
  course_id: string
  title: string
  skills: string[]
  last_reviewed: string | null
  enrollments_12m: number | null
  enrollments_prev_12m: number | null
  owner: string
}

/** Move the ability stage's input counter on (once per import batch; see migration 12). */
export function bumpAbilityInputs(db: Db): void {
  db.prepare("UPDATE change_counters SET value = value + 1 WHERE name = 'ability_inputs'").run()
}

/** The ability stage's input counter (see migration 12). */
export function readAbilityInputs(db: Db): number {
  return (db.prepare("SELECT value FROM change_counters WHERE name = 'ability_inputs'").get() as { value: number }).value
}

export function upsertPeople(db: Db, rows: readonly PersonRow[]): void {
  const st = db.prepare('INSERT INTO people(person_id, role, team) VALUES (@person_id, @role, @team) ON CONFLICT(person_id) DO UPDATE SET role = excluded.role, team = excluded.team')
  for (const r of rows) st.run(r)
  if (rows.length > 0) bumpAbilityInputs(db)
}

export function upsertRoles(db: Db, rows: readonly RoleRow[]): void {
  const st = db.prepare('INSERT INTO roles(role, skill_id, required_theta) VALUES (@role, @skill_id, @required_theta) ON CONFLICT(role, skill_id) DO UPDATE SET required_theta = excluded.required_theta')
  for (const r of rows) st.run(r)
  if (rows.length > 0) bumpAbilityInputs(db)
}

export function upsertItems(db: Db, rows: readonly ItemRow[]): void {
  const st = db.prepare(
    "INSERT INTO items(item_id, skill_id, a, b, c, origin) VALUES (@item_id, @skill_id, @a, @b, @c, 'import') ON CONFLICT(item_id) DO UPDATE SET skill_id = excluded.skill_id, a = excluded.a, b = excluded.b, c = excluded.c, origin = 'import'",
  )
  for (const r of rows) st.run(r)
  if (rows.length > 0) bumpAbilityInputs(db)
}

const lookups = new WeakMap<Db, Map<string, Database.Statement>>()

/** A kept statement: the lookups below run once per imported row (or per distinct name). */
function lookup(db: Db, sql: string): Database.Statement {
  let kept = lookups.get(db)
  if (!kept) lookups.set(db, (kept = new Map()))
  let st = kept.get(sql)
  if (!st) kept.set(sql, (st = db.prepare(sql)))
  return st
}

/** Whether an item is stored. */
export function itemExists(db: Db, itemId: string): boolean {
  return lookup(db, 'SELECT 1 FROM items WHERE item_id = ?').get(itemId) !== undefined
}

/** Whether a person is stored. */
export function personExists(db: Db, personId: string): boolean {
  return lookup(db, 'SELECT 1 FROM people WHERE person_id = ?').get(personId) !== undefined
}

/** Whether any person is stored (the import's reference notes check against the table only once it has rows). */
export function hasPeople(db: Db): boolean {
  return db.prepare('SELECT 1 FROM people LIMIT 1').get() !== undefined
}

export function upsertResponses(db: Db, rows: readonly ResponseRow[]): void {
  const st = db.prepare('INSERT INTO responses(person_id, item_id, response, taken_at) VALUES (@person_id, @item_id, @response, @taken_at) ON CONFLICT DO UPDATE SET response = excluded.response')
  for (const r of rows) st.run(r)
  if (rows.length > 0) bumpAbilityInputs(db)
}

export function upsertImportedAbilities(db: Db, rows: readonly AbilityRow[]): void {
  const st = db.prepare(
    "INSERT INTO abilities(person_id, skill_id, origin, theta, se, assessed_at, method) VALUES (@person_id, @skill_id, 'import', @theta, @se, @assessed_at, 'imported') ON CONFLICT(person_id, skill_id, origin) DO UPDATE SET theta = excluded.theta, se = excluded.se, assessed_at = excluded.assessed_at WHERE excluded.assessed_at >= abilities.assessed_at",
  )
  for (const r of rows) st.run(r)
  if (rows.length > 0) bumpAbilityInputs(db)
}

export function upsertCourses(db: Db, rows: readonly CourseRow[]): void {
  const course = db.prepare(
    `INSERT INTO courses(course_id, title, last_reviewed, enrollments_12m, enrollments_prev_12m, owner)
     VALUES (@course_id, @title, @last_reviewed, @enrollments_12m, @enrollments_prev_12m, @owner)
     ON CONFLICT(course_id) DO UPDATE SET title = excluded.title, last_reviewed = excluded.last_reviewed,
       enrollments_12m = excluded.enrollments_12m, enrollments_prev_12m = excluded.enrollments_prev_12m, owner = excluded.owner`,
  )
  const clear = db.prepare('DELETE FROM course_skills WHERE course_id = ?')
  const skill = db.prepare('INSERT OR IGNORE INTO course_skills(course_id, skill_ref, inferred) VALUES (?, ?, 0)')
  for (const r of rows) {
    course.run(r)
    clear.run(r.course_id)
    for (const s of r.skills) skill.run(r.course_id, s)
  }
}

export interface TableCounts { [table: string]: number }

/** Row counts of the workforce and course tables. */
export function workforceCounts(db: Db): TableCounts {
  const out: TableCounts = {}
  for (const t of ['people', 'roles', 'items', 'responses', 'abilities', 'courses']) {
    out[t] = (db.prepare(`SELECT COUNT(*) AS n FROM ${t}`).get() as { n: number }).n
  }
  return out
}
