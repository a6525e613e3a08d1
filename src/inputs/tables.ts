/**
 * @module inputs/tables
 * The CSV import kinds for workforce and course data (DESIGN.md "Input kinds"): columns, row
 * validation and storage. A file with bad rows imports nothing unless `skipBad` is set; then the good
 * rows land and the bad ones are counted. Every problem names file, line and column.
 */
import fs from 'node:fs'
import type { Db } from '../db/connection.ts'
import * as store from '../db/workforce.ts'
import { type InputProblem, readCsv } from '../util/csv.ts'
import { FieldError, date, list, number, text } from './fields.ts'
import { conceptCount, conceptExists } from '../db/taxonomy.ts'
import { readFailure } from '../errors.ts'

export type TableKind = 'items' | 'responses' | 'abilities' | 'people' | 'roles' | 'courses'

interface TableSpec<R> {
  required: readonly string[]
  optional?: readonly string[]
  row(values: Record<string, string>): R
  /** checks against what is already stored or earlier in the file; returns a problem reason or null */
  check?(db: Db, row: R): { column: string; reason: string } | null
  /**
   * columns that name a skill of the taxonomy or a person of the people table: a name that is not
   * there keeps its row (the order of imports is free) but is noted once per column (referenceNotes)
   */
  references?: { column: string; of: 'skill' | 'person'; id(row: R): string }[]
  store(db: Db, rows: R[]): void
}

/** Erases a spec's row type once it is checked, so the specs can share one table. */
function spec<R>(s: TableSpec<R>): TableSpec<unknown> {
  return s as TableSpec<unknown>
}

const SPECS: Record<TableKind, TableSpec<unknown>> = {
  items: spec<store.ItemRow>({
    required: ['item_id', 'skill_id', 'a', 'b', 'c'],
    row: (v) =>
      ({
        item_id: text(v, 'item_id', { max: 200 }),
        skill_id: text(v, 'skill_id', { max: 200 }),
        a: number(v, 'a', { required: false, min: 0.01, max: 10 }),
        b: number(v, 'b', { required: false, min: -10, max: 10 }),
        c: number(v, 'c', { required: false, min: 0, max: 0.99 }),
      }),
    references: [{ column: 'skill_id', of: 'skill', id: (r) => r.skill_id }],
    store: (db, rows) => store.upsertItems(db, rows),
  }),
  responses: spec<store.ResponseRow>({
    required: ['person_id', 'item_id', 'response', 'taken_at'],
    row: (v) =>
      ({
        person_id: text(v, 'person_id', { max: 200 }),
        item_id: text(v, 'item_id', { max: 200 }),
        response: number(v, 'response', { min: 0, max: 1, integer: true }),
        taken_at: date(v, 'taken_at'),
      }),
    check: (db, row) => (store.itemExists(db, row.item_id) ? null : { column: 'item_id', reason: `unknown item "${row.item_id}" (import items first)` }),
    references: [{ column: 'person_id', of: 'person', id: (r) => r.person_id }],
    store: (db, rows) => store.upsertResponses(db, rows),
  }),
  abilities: spec<store.AbilityRow>({
    required: ['person_id', 'skill_id', 'theta', 'se', 'assessed_at'],
    row: (v) =>
      ({
        person_id: text(v, 'person_id', { max: 200 }),
        skill_id: text(v, 'skill_id', { max: 200 }),
        theta: number(v, 'theta', { min: -10, max: 10 }),
        se: number(v, 'se', { min: 0.0001, max: 10 }),
        assessed_at: date(v, 'assessed_at'),
      }),
    references: [
      { column: 'person_id', of: 'person', id: (r) => r.person_id },
      { column: 'skill_id', of: 'skill', id: (r) => r.skill_id },
    ],
    store: (db, rows) => store.upsertImportedAbilities(db, rows),
  }),
  people: spec<store.PersonRow>({
    required: ['person_id', 'role'],
    optional: ['team'],
    row: (v) => ({ person_id: text(v, 'person_id', { max: 200 }), role: text(v, 'role', { max: 200 }), team: text(v, 'team', { required: false, max: 200 }) }),
    store: (db, rows) => store.upsertPeople(db, rows),
  }),
  roles: spec<store.RoleRow>({
    required: ['role', 'skill_id', 'required_theta'],
    row: (v) => ({ role: text(v, 'role', { max: 200 }), skill_id: text(v, 'skill_id', { max: 200 }), required_theta: number(v, 'required_theta', { min: -6, max: 6 }) }),
    references: [{ column: 'skill_id', of: 'skill', id: (r) => r.skill_id }],
    store: (db, rows) => store.upsertRoles(db, rows),
  }),
  courses: spec<store.CourseRow>({
    required: ['course_id', 'title', 'skills', 'last_reviewed', 'enrollments_12m', 'owner'],
    optional: ['enrollments_prev_12m'],
    row: (v) =>
      ({
        course_id: text(v, 'course_id', { max: 200 }),
        title: text(v, 'title', { max: 500 }),
        skills: list(v, 'skills'),
        last_reviewed: date(v, 'last_reviewed', { required: false }),
        enrollments_12m: number(v, 'enrollments_12m', { required: false, min: 0, integer: true }),
        enrollments_prev_12m: number(v, 'enrollments_prev_12m', { required: false, min: 0, integer: true }),
        owner: text(v, 'owner', { required: false, max: 200 }),
      }),
    // (no reference note: a course's skills may be labels, resolved by the plan)
    store: (db, rows) => store.upsertCourses(db, rows),
  }),
}

export const TABLE_KINDS = Object.keys(SPECS) as TableKind[]

export function tableColumns(kind: TableKind): { required: readonly string[]; optional: readonly string[] } {
  return { required: SPECS[kind].required, optional: SPECS[kind].optional ?? [] }
}

export interface ImportResult {
  kind: string
  file: string
  read: number
  imported: number
  skipped: number
  problems: InputProblem[]
  /** true when nothing was stored because of bad rows (and skipBad was not set) */
  refused: boolean
  /**
   * refused as a whole (it cannot be read, is of the wrong kind, or its header or format is wrong):
   * skipping bad rows cannot help
   */
  whole?: boolean
}

/** Nothing imported: for bad rows (`read` rows read), or for the file as a whole (`whole`). */
export function refusal(kind: string, file: string, problems: InputProblem[], how: { read: number } | 'whole'): ImportResult {
  return { kind, file, read: how === 'whole' ? 0 : how.read, imported: 0, skipped: 0, problems, refused: true, ...(how === 'whole' ? { whole: true } : {}) }
}

/** Validates and stores one CSV file of a table kind. */
export function importTableFile(db: Db, kind: TableKind, file: string, opts: { skipBad?: boolean } = {}): ImportResult {
  let content: string
  try {
    content = fs.readFileSync(file, 'utf8')
  } catch (err) {
    return refusal(kind, file, [{ file, line: 0, reason: `cannot read: ${readFailure(err)}` }], 'whole')
  }
  return importTableText(db, kind, content, file, opts)
}

export function importTableText(db: Db, kind: TableKind, content: string, file: string, opts: { skipBad?: boolean } = {}): ImportResult {
  const spec = SPECS[kind]
  if (content.includes('\uFFFD')) {
    const line = content.slice(0, content.indexOf('\uFFFD')).split('\n').length
    return refusal(kind, file, [{ file, line, reason: 'not valid UTF-8 text' }], 'whole')
  }
  const parsed = readCsv(content, file, spec.required, spec.optional ?? [])
  if (parsed.fatal) return refusal(kind, file, [parsed.fatal], 'whole')
  const problems = [...parsed.problems]
  const good: unknown[] = []
  const goodLines: number[] = []
  const run = db.transaction(() => {
    for (const { line, values } of parsed.rows) {
      try {
        const row = spec.row(values)
        const bad = spec.check?.(db, row)
        if (bad) problems.push({ file, line, column: bad.column, reason: bad.reason })
        else {
          good.push(row)
          goodLines.push(line)
        }
      } catch (err) {
        if (err instanceof FieldError) problems.push({ file, line, column: err.column, reason: err.message })
        else throw err
      }
    }
    if (problems.length > 0 && !opts.skipBad) return false
    spec.store(db, good)
    return true
  })
  const stored = run()
  const read = parsed.rows.length + parsed.problems.length
  const notes = referenceNotes(db, spec, good, goodLines, file)
  return { kind, file, read, imported: stored ? good.length : 0, skipped: stored ? read - good.length : 0, refused: !stored, problems: [...parsed.warnings, ...notes, ...problems] }
}

/**
 * One note per reference column whose names are not stored: how many rows, how many names, the
 * first of them with its line. Such rows are kept (items may come before the taxonomy has their
 * skill, responses before their people), but a skill id spelt differently from the taxonomy's
 * would otherwise count toward no skill shown, silently. A people table with no rows yet is not
 * checked against, nor is an empty taxonomy. Each name is looked up once.
 */
function referenceNotes(db: Db, spec: TableSpec<unknown>, rows: readonly unknown[], lines: readonly number[], file: string): InputProblem[] {
  const notes: InputProblem[] = []
  for (const ref of spec.references ?? []) {
    if (ref.of === 'person' ? !store.hasPeople(db) : conceptCount(db) === 0) continue
    const known = new Map<string, boolean>()
    const isKnown = (id: string): boolean => {
      let k = known.get(id)
      if (k === undefined) known.set(id, (k = ref.of === 'skill' ? conceptExists(db, id) : store.personExists(db, id)))
      return k
    }
    let naming = 0
    let first: { line: number; id: string } | null = null
    for (let i = 0; i < rows.length; i++) {
      const id = ref.id(rows[i])
      if (isKnown(id)) continue
      naming++
      first ??= { line: lines[i]!, id }
    }
    if (!first) continue
    const names = [...known.values()].filter((k) => !k).length
    const what = ref.of === 'skill' ? `skill${names === 1 ? '' : 's'} not in the taxonomy` : `${names === 1 ? 'person' : 'people'} not in the people table`
    const until = ref.of === 'skill' ? 'count toward a skill once the taxonomy has its id' : 'count in a role once the person is imported'
    notes.push({ file, line: first.line, column: ref.column, reason: `${naming} row${naming === 1 ? ' names' : 's name'} ${names} ${what} (first "${first.id}"); the rows are kept, and ${until}` })
  }
  return notes
}
