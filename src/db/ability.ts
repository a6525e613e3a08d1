/**
 * @module db/ability
 * SQL of the ability stage: it reads items, responses, abilities, people and roles, and writes
 * calibrated item parameters, estimated abilities (origin 'estimate') and the coverage table.
 *
 * Coverage columns describe the assessed people, with the never-assessed counted apart in
 * `unknown`: expected_meeting = Σp, expected_gap = assessed − Σp, gap_low/gap_high = the interval of
 * that gap, coverage = Σp/assessed (NULL when nobody is assessed).
 */
import type { Db } from './connection.ts'
import type { StoredAbility } from '../ability/current.ts'
import type { CoverageRow } from '../ability/coverage-table.ts'

export interface ItemRecord {
  item_id: string
  skill_id: string
  a: number | null
  b: number | null
  c: number | null
  origin: string
}

export function readItems(db: Db): ItemRecord[] {
  return db.prepare('SELECT item_id, skill_id, a, b, c, origin FROM items ORDER BY skill_id, item_id').all() as ItemRecord[]
}

/** The latest response of each person to each item (earlier attempts are ignored). */
export interface LatestResponse {
  person_id: string
  item_id: string
  response: number
  taken_at: string
}

export function readLatestResponses(db: Db): LatestResponse[] {
  return db
    .prepare(
      `SELECT person_id, item_id, response, taken_at FROM (
         SELECT person_id, item_id, response, taken_at,
                ROW_NUMBER() OVER (PARTITION BY person_id, item_id ORDER BY taken_at DESC) AS pick
         FROM responses)
       WHERE pick = 1 ORDER BY item_id, person_id`,
    )
    .all() as LatestResponse[]
}

export interface ItemCalibrationUpdate {
  item_id: string
  /** null when the item could not be calibrated (its status says why) */
  a: number | null
  b: number | null
  fit_json: string
}

/** Store calibration results; items are marked origin 'calibrated'. */
export function writeCalibration(db: Db, updates: readonly ItemCalibrationUpdate[]): void {
  const st = db.prepare("UPDATE items SET a = @a, b = @b, c = NULL, origin = 'calibrated', fit_json = @fit_json WHERE item_id = @item_id")
  for (const u of updates) st.run(u)
}

export interface EstimatedAbility {
  person_id: string
  skill_id: string
  theta: number
  se: number
  assessed_at: string
  method: string
  note: string | null
}

/** Replace every ability estimated here by the given set (imported abilities are untouched). */
export function replaceEstimatedAbilities(db: Db, rows: readonly EstimatedAbility[]): void {
  db.prepare("DELETE FROM abilities WHERE origin = 'estimate'").run()
  const st = db.prepare(
    "INSERT INTO abilities(person_id, skill_id, origin, theta, se, assessed_at, method, note) VALUES (@person_id, @skill_id, 'estimate', @theta, @se, @assessed_at, @method, @note)",
  )
  for (const row of rows) st.run(row)
}

export function readAbilities(db: Db): StoredAbility[] {
  return db
    .prepare(
      `SELECT person_id AS personId, skill_id AS skillId, origin, theta, se, assessed_at AS assessedAt, method, note
       FROM abilities ORDER BY person_id, skill_id`,
    )
    .all() as StoredAbility[]
}

export function readPeople(db: Db): Array<{ personId: string; role: string }> {
  return db.prepare('SELECT person_id AS personId, role FROM people ORDER BY person_id').all() as Array<{ personId: string; role: string }>
}

export function readRequirements(db: Db): Array<{ role: string; skillId: string; requiredTheta: number }> {
  return db
    .prepare('SELECT role, skill_id AS skillId, required_theta AS requiredTheta FROM roles ORDER BY skill_id, role')
    .all() as Array<{ role: string; skillId: string; requiredTheta: number }>
}

/** Replace the coverage table with per-role rows. */
export function replaceCoverage(db: Db, rows: readonly CoverageRow[], updatedAt: string): void {
  db.prepare('DELETE FROM coverage').run()
  const st = db.prepare(
    `INSERT INTO coverage(skill_id, role, required_theta, headcount, assessed, unknown, stale, expected_meeting, coverage,
                          expected_gap, gap_low, gap_high, updated_at)
     VALUES (@skillId, @role, @requiredTheta, @headcount, @assessed, @unknown, @stale, @expectedMeeting, @coverage,
             @expectedGap, @gapLow, @gapHigh, @updatedAt)`,
  )
  for (const row of rows) {
    st.run({
      skillId: row.skillId,
      role: row.role,
      requiredTheta: row.requiredTheta,
      headcount: row.headcount,
      assessed: row.assessed,
      unknown: row.unknown,
      stale: row.stale,
      expectedMeeting: row.expectedMeetingAssessed,
      coverage: row.coverage,
      expectedGap: row.expectedGapAssessed,
      gapLow: row.gapIntervalAssessed[0],
      gapHigh: row.gapIntervalAssessed[1],
      updatedAt,
    })
  }
}

/** Preferred labels of the given concepts (ids without a concept are left out). */
export function readSkillLabels(db: Db): Map<string, string> {
  const rows = db.prepare('SELECT id, pref_label FROM concepts').all() as Array<{ id: string; pref_label: string }>
  return new Map(rows.map((r) => [r.id, r.pref_label]))
}

export function readCoverageUpdatedAt(db: Db): string | null {
  const row = db.prepare('SELECT MAX(updated_at) AS at FROM coverage').get() as { at: string | null }
  return row.at
}
