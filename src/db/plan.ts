/**
 * @module db/plan
 * SQL of the plan stage: it reads curves, coverage, mentions, documents, the demand aggregates,
 * courses, people, roles and abilities, and writes plan_outputs, course_flag_notes and the skill_id resolution of course_skills.
 */
import { ROLL_UP } from './ancestry.ts'
import { getSetting, setSetting, type Db } from './connection.ts'
import { readConceptLabelList, type CurveRow } from './curves.ts'
import { conceptsByCode } from './mention-lists.ts'

/** A row of the curves table as the plan stage reads it. */
export type CurveRecord = Omit<CurveRow, 'forecast_method' | 'change_month' | 'emerged_month'>

/**
 * The curves as the plan reads them, with only the details keys it uses (see PLAN_DETAIL_KEYS).
 * With `bandStates` (the plan passes the rising states, whose forecast bands its reskilling
 * forecast draws), less: the details of a curve that is not evidence (plan/curve-model.ts: state
 * insufficient-evidence, or no latest or forecast share) are not read at all, nothing of them being
 * used; of the other curves only the fitted latest share, and the bands with their level and the
 * latest month only for curves in `bandStates`. At a million postings the details are 138 MB
 * (20,000 curves): reading them all took 1.7-2.0 s CPU with the curve model, this 0.45 s (the
 * fitted latest share of 12,000 evidenced curves still has SQLite parse their details). The binary
 * month series (`series`, migration 10: the forecast bands of newer rows) come only with the
 * curves whose bands are read; plan/curve-model.ts puts them back in place (curveRowDetails).
 */
export function readCurves(db: Db, bandStates?: readonly string[]): CurveRecord[] {
  const object = `json_valid(details_json) AND json_type(details_json) = 'object'`
  const skip = `state = 'insufficient-evidence' OR latest_share IS NULL OR forecast_share12 IS NULL OR NOT (${object})`
  const banded = `state IN (SELECT value FROM json_each(?))`
  const details = bandStates
    ? `CASE WHEN ${skip} THEN '{}' WHEN ${banded} THEN ${pickDetails(PLAN_DETAIL_KEYS)} ELSE ${pickDetails(['fittedLatestShare'])} END`
    : `CASE WHEN ${object} THEN ${pickDetails(PLAN_DETAIL_KEYS)} ELSE '{}' END`
  // the binary series (forecast bands since migration 10) only where the bands are read
  const series = bandStates ? `CASE WHEN ${skip} THEN NULL WHEN ${banded} THEN series END` : 'series'
  const states = bandStates ? [JSON.stringify(bandStates)] : []
  return db
    .prepare(
      `SELECT concept_id, state, annual_growth, growth_low, growth_high, half_life_months, half_life_low, half_life_high,
              p_value, p_adjusted, latest_share, forecast_share12, ${details} AS details_json, ${series} AS series, fitted_at
       FROM curves ORDER BY concept_id`,
    )
    .all(...states, ...states) as CurveRecord[]
}

/**
 * The keys of `curves.details_json` the plan reads (plan/curve-model.ts: forecast bands and their
 * level, the fitted latest share, the latest month; under each name it accepts), picked out by
 * SQLite: the whole details (fitted and combined series, tests, ...) are about five times larger, and
 * parsing them all was the plan's largest read (0.85 s of 20,000 curves at N = 100,000). Malformed
 * details read as {} (absent, as before).
 */
const PLAN_DETAIL_KEYS = ['forecast', 'seriesLayout', 'bands', 'forecastBands', 'forecastLevel', 'bandLevel', 'level', 'fittedLatestShare', 'lastMonth', 'latestMonth']
const pickDetails = (keys: readonly string[]) => `json_object(${keys.map((k) => `'${k}', json_extract(details_json, '$.${k}')`).join(', ')})`

/** concept id -> prefLabel */
export function readConceptLabels(db: Db): Map<string, string> {
  return new Map(readConceptLabelList(db))
}

export interface LabelRecord {
  concept_id: string
  label: string
  kind: 'pref' | 'alt' | 'hidden'
  case_sensitive: number
}

export function readLabels(db: Db): LabelRecord[] {
  return db.prepare('SELECT concept_id, label, kind, case_sensitive FROM labels ORDER BY concept_id, kind, label').all() as LabelRecord[]
}

export interface CoverageRecord {
  skill_id: string
  role: string
  required_theta: number
  headcount: number
  assessed: number
  unknown: number
  expected_meeting: number
  coverage: number | null
  expected_gap: number
  gap_low: number
  gap_high: number
}

export function readCoverage(db: Db): CoverageRecord[] {
  return db
    .prepare(
      `SELECT skill_id, role, required_theta, headcount, assessed, unknown, expected_meeting, coverage, expected_gap, gap_low, gap_high
       FROM coverage ORDER BY skill_id, role`,
    )
    .all() as CoverageRecord[]
}

export interface RoleRequirement {
  role: string
  skill_id: string
  required_theta: number
}

export function readRoleRequirements(db: Db): RoleRequirement[] {
  return db.prepare('SELECT role, skill_id, required_theta FROM roles ORDER BY role, skill_id').all() as RoleRequirement[]
}

export interface PersonRecord {
  person_id: string
  role: string
}

export function readPeople(db: Db): PersonRecord[] {
  return db.prepare('SELECT person_id, role FROM people ORDER BY person_id').all() as PersonRecord[]
}

export interface AbilityRecord {
  person_id: string
  skill_id: string
  theta: number
  se: number
  assessed_at: string
}

/**
 * One ability per person and skill: the latest assessment; on the same date an estimate made here
 * wins over an imported one.
 */
export function readLatestAbilities(db: Db): AbilityRecord[] {
  return db
    .prepare(
      `SELECT person_id, skill_id, theta, se, assessed_at FROM (
         SELECT person_id, skill_id, theta, se, assessed_at,
                ROW_NUMBER() OVER (PARTITION BY person_id, skill_id
                                   ORDER BY assessed_at DESC, CASE origin WHEN 'estimate' THEN 0 ELSE 1 END) AS pick
         FROM abilities)
       WHERE pick = 1 ORDER BY person_id, skill_id`,
    )
    .all() as AbilityRecord[]
}

const NO_CONCEPTS: readonly string[] = Object.freeze([])

/**
 * The concept lists adjacency is counted from: for every distinct document of a kind from
 * `sinceMonth` on, the concepts it mentions directly (not by roll-up), only those among `concepts`
 * when given (PPMI asks for pairs of a few dozen skills only), in no particular order. Documents
 * with none of them give an empty list (at the end): the count of documents is every document of
 * the window.
 *
 * Read from `mention_lists` (db/mention-lists.ts), one short row per document, clustered on (kind,
 * month, id), each month's rows joined by SQLite into one blob (zero bytes between documents):
 * reading each document's mention rows (with roll-ups, about 25 a posting) was the plan's largest
 * cost at a million postings (2.1 s of 4.3 s), and a value per row costs about 2 µs on the
 * JavaScript side. The documents are counted from the (kind, month) index.
 */
export function* readConceptLists(db: Db, kind: 'posting' | 'request', sinceMonth: string | null, concepts: readonly string[] | null): Generator<readonly string[]> {
  const since = sinceMonth ?? ''
  const originals = 'NOT IN (SELECT id FROM documents WHERE duplicate_of IS NOT NULL)'
  const documents = db.prepare(`SELECT COUNT(*) FROM documents WHERE kind = ? AND month >= ? AND id ${originals}`).pluck().get(kind, since) as number
  const byCode = conceptsByCode(db, concepts ? new Set(concepts) : null)
  const months = db
    .prepare(`SELECT CAST(group_concat(codes, X'00') AS BLOB) FROM mention_lists WHERE kind = ? AND month >= ? AND document_id ${originals} GROUP BY month`)
    .pluck()
    .iterate(kind, since) as IterableIterator<Buffer>
  let listed = 0
  for (const blob of months) {
    let list: string[] | null = null
    let code = 0
    let shift = 0
    // decodeCodes (db/mention-lists.ts) inlined for the month's concatenation: a zero byte ends a
    // document, and codes outside the listed concepts are skipped as they are read
    for (let i = 0; i <= blob.length; i++) {
      const x = i < blob.length ? blob[i]! : 0
      if (x === 0) {
        // the end of a document
        if (list) {
          listed++
          yield list
          list = null
        }
        continue
      }
      code |= (x & 127) << shift
      if (x & 128) {
        shift += 7
        continue
      }
      const id = byCode[code]
      code = 0
      shift = 0
      if (id !== undefined) (list ??= []).push(id)
    }
  }
  for (let i = listed; i < documents; i++) yield NO_CONCEPTS
}

/** The latest month with a distinct document of this kind, or null. */
export function latestDocumentMonth(db: Db, kind: 'posting' | 'request'): string | null {
  const row = db.prepare('SELECT MAX(month) AS m FROM documents WHERE kind = ? AND duplicate_of IS NULL').get(kind) as { m: string | null }
  return row.m
}

/** Distinct documents of a kind per month, mapped or not (a GROUP BY over the documents). */
export function documentTotalsByMonth(db: Db, kind: 'posting' | 'request'): Map<string, number> {
  const rows = db
    .prepare('SELECT month, COUNT(*) AS n FROM documents WHERE kind = ? AND duplicate_of IS NULL GROUP BY month')
    .all(kind) as { month: string; n: number }[]
  return new Map(rows.map((r) => [r.month, r.n]))
}

/**
 * Original requests per month counted in the internal demand series (mapped documents), from the
 * running aggregate `demand_totals`: its cost depends on the number of months, not of documents.
 */
export function requestTotalsByMonth(db: Db): Map<string, number> {
  const rows = db.prepare("SELECT month, total FROM demand_totals WHERE series = 'internal'").raw().all() as [string, number][]
  return new Map(rows)
}

/**
 * Original requests mentioning each concept (directly or by roll-up) per month, from the running
 * aggregate `demand_counts` (series 'internal'): concepts x months rows, however many requests there are.
 * Requests not (yet) mapped are in neither this nor {@link requestTotalsByMonth}; after a map run
 * every request is mapped and both equal the full readings {@link mentionCountsByMonth} and
 * {@link documentTotalsByMonth} (test/plan/request-aggregates.test.ts).
 */
export function requestMentionCountsByMonth(db: Db): { concept_id: string; month: string; n: number }[] {
  return db
    .prepare("SELECT concept_id, month, n FROM demand_counts WHERE series = 'internal' AND n > 0 ORDER BY concept_id, month")
    .all() as { concept_id: string; month: string; n: number }[]
}

/**
 * Distinct documents of a kind mentioning each concept (directly or by roll-up), per month, read
 * from every mention (its cost grows with the corpus): the reference for
 * {@link requestMentionCountsByMonth}, which the plan stage uses.
 */
export function mentionCountsByMonth(db: Db, kind: 'posting' | 'request'): { concept_id: string; month: string; n: number }[] {
  return db
    .prepare(
      `${ROLL_UP}
       SELECT r.counted_id AS concept_id, d.month, COUNT(DISTINCT d.id) AS n
       FROM mentions m JOIN roll_up r ON r.concept_id = m.concept_id JOIN documents d ON d.id = m.document_id
       WHERE d.kind = ? AND d.duplicate_of IS NULL
       GROUP BY r.counted_id, d.month`,
    )
    .all(kind) as { concept_id: string; month: string; n: number }[]
}

const KEPT_COURSE_RESOLUTIONS = 'plan.courseResolutions'

/** Course resolutions kept from the last plan run, with the digest of what they were made from. */
interface KeptCourseResolutions<T> {
  inputs: string
  method: string
  courses: readonly T[]
}

/** The course resolutions the last plan run kept, when they were made from `inputs` (a digest); else null. */
export function readKeptCourseResolutions<T extends { courseId: string }>(db: Db, inputs: string): { method: string; courses: Map<string, T> } | null {
  const text = getSetting(db, KEPT_COURSE_RESOLUTIONS)
  if (text === undefined) return null
  const kept = JSON.parse(text) as KeptCourseResolutions<T>
  if (kept.inputs !== inputs) return null
  return { method: kept.method, courses: new Map(kept.courses.map((c) => [c.courseId, c])) }
}

/** Keeps this run's course resolutions for the next run (inside the plan's transaction). */
export function writeKeptCourseResolutions<T>(db: Db, inputs: string, method: string, courses: readonly T[]): void {
  setSetting(db, KEPT_COURSE_RESOLUTIONS, JSON.stringify({ inputs, method, courses } satisfies KeptCourseResolutions<T>))
}

export interface CourseRecord {
  course_id: string
  title: string
  last_reviewed: string | null
  enrollments_12m: number | null
  enrollments_prev_12m: number | null
  owner: string
}

export function readCourses(db: Db): CourseRecord[] {
  return db
    .prepare('SELECT course_id, title, last_reviewed, enrollments_12m, enrollments_prev_12m, owner FROM courses ORDER BY course_id')
    .all() as CourseRecord[]
}

export function courseExists(db: Db, courseId: string): boolean {
  return db.prepare('SELECT 1 FROM courses WHERE course_id = ?').get(courseId) !== undefined
}

export interface CourseSkillRecord {
  course_id: string
  skill_ref: string
  skill_id: string | null
  inferred: number
}

export function readCourseSkills(db: Db): CourseSkillRecord[] {
  return db.prepare('SELECT course_id, skill_ref, skill_id, inferred FROM course_skills ORDER BY course_id, skill_ref').all() as CourseSkillRecord[]
}

/** Records which concept a course's skill reference resolved to (null when unknown). */
export function setCourseSkillId(db: Db, courseId: string, skillRef: string, skillId: string | null): void {
  db.prepare('UPDATE course_skills SET skill_id = ? WHERE course_id = ? AND skill_ref = ?').run(skillId, courseId, skillRef)
}

/** Adds a skill mapped from the title of an untagged course (inferred = 1). */
export function upsertInferredCourseSkill(db: Db, courseId: string, skillRef: string, skillId: string): void {
  db.prepare(
    `INSERT INTO course_skills(course_id, skill_ref, skill_id, inferred) VALUES (?, ?, ?, 1)
     ON CONFLICT(course_id, skill_ref) DO UPDATE SET skill_id = excluded.skill_id WHERE course_skills.inferred = 1`,
  ).run(courseId, skillRef, skillId)
}

/** Removes title-inferred skills of a course that no longer maps to them. */
export function deleteInferredCourseSkills(db: Db, courseId: string, keepRefs: readonly string[]): void {
  const rows = db.prepare('SELECT skill_ref FROM course_skills WHERE course_id = ? AND inferred = 1').all(courseId) as { skill_ref: string }[]
  const del = db.prepare('DELETE FROM course_skills WHERE course_id = ? AND skill_ref = ? AND inferred = 1')
  for (const r of rows) if (!keepRefs.includes(r.skill_ref)) del.run(courseId, r.skill_ref)
}

/** A row of plan_outputs with its payload parsed. */
export interface PlanOutput<P = Record<string, unknown>> {
  kind: string
  key: string
  rank: number | null
  score: number | null
  payload: P
  updated_at: string
}

export interface PlanOutputInput {
  kind: string
  key: string
  rank: number | null
  score: number | null
  payload: unknown
}

/** Replaces every row of the given kinds with `rows` (call inside the stage's transaction). */
export function replacePlanOutputs(db: Db, kinds: readonly string[], rows: readonly PlanOutputInput[], updatedAt: string): void {
  const del = db.prepare('DELETE FROM plan_outputs WHERE kind = ?')
  for (const k of kinds) del.run(k)
  const ins = db.prepare('INSERT INTO plan_outputs(kind, key, rank, score, payload_json, updated_at) VALUES (?, ?, ?, ?, ?, ?)')
  for (const r of rows) ins.run(r.kind, r.key, r.rank, r.score, JSON.stringify(r.payload), updatedAt)
}

/** Rows of one kind, by rank (unranked last) then key. */
export function readPlanOutputs<P = Record<string, unknown>>(db: Db, kind: string): PlanOutput<P>[] {
  const rows = db
    .prepare('SELECT kind, key, rank, score, payload_json, updated_at FROM plan_outputs WHERE kind = ? ORDER BY rank IS NULL, rank, key')
    .all(kind) as { kind: string; key: string; rank: number | null; score: number | null; payload_json: string; updated_at: string }[]
  return rows.map((r) => ({ kind: r.kind, key: r.key, rank: r.rank, score: r.score, payload: JSON.parse(r.payload_json) as P, updated_at: r.updated_at }))
}

export interface FlagNoteInput {
  course_id: string
  action: 'flagged' | 'snooze' | 'unsnooze'
  flag: string | null
  note: string
  actor: string
  until: string | null
}

export interface FlagNoteRecord extends FlagNoteInput {
  id: number
  at: string
}

export function insertFlagNote(db: Db, note: FlagNoteInput, at: string = new Date().toISOString()): number {
  return Number(
    db
      .prepare('INSERT INTO course_flag_notes(course_id, action, flag, note, actor, until, at) VALUES (?, ?, ?, ?, ?, ?, ?)')
      .run(note.course_id, note.action, note.flag, note.note, note.actor, note.until, at).lastInsertRowid,
  )
}

/** The audit trail of one course (or all courses), oldest first. */
export function readFlagNotes(db: Db, courseId?: string): FlagNoteRecord[] {
  if (courseId !== undefined) {
    return db.prepare('SELECT * FROM course_flag_notes WHERE course_id = ? ORDER BY id').all(courseId) as FlagNoteRecord[]
  }
  return db.prepare('SELECT * FROM course_flag_notes ORDER BY id').all() as FlagNoteRecord[]
}

/** The latest snooze or unsnooze note of each course. */
export function latestSnoozeNotes(db: Db): Map<string, FlagNoteRecord> {
  const rows = db
    .prepare(
      `SELECT n.* FROM course_flag_notes n
       JOIN (SELECT course_id, MAX(id) AS id FROM course_flag_notes WHERE action IN ('snooze','unsnooze') GROUP BY course_id) m ON m.id = n.id`,
    )
    .all() as FlagNoteRecord[]
  return new Map(rows.map((r) => [r.course_id, r]))
}

/** Headcount per role from the people table. */
export function roleHeadcounts(db: Db): Map<string, number> {
  const rows = db.prepare('SELECT role, COUNT(*) AS n FROM people GROUP BY role').all() as { role: string; n: number }[]
  return new Map(rows.map((r) => [r.role, r.n]))
}
