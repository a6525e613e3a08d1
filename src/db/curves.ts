/**
 * @module db/curves
 * SQL of the fit stage: reads monthly demand per skill from documents and mentions (after dedupe and
 * roll-up), and writes the demand series and the fitted curves. Reposts (duplicate_of set) and
 * documents not yet mapped are left out of both the counts and the totals, so a share is always
 * "mapped original documents that mention the skill, of all mapped original documents".
 */
import type { Db } from './connection.ts'

export type DemandSeries = 'external' | 'internal'

/** Document kind behind each demand series. */
const KIND_OF: Record<DemandSeries, string> = { external: 'posting', internal: 'request' }

export interface DemandRow {
  concept_id: string
  series: DemandSeries
  month: string
  n: number
  total: number
}

export interface MonthlyDemand {
  /** every month with at least one mapped original document of either kind, oldest first */
  months: string[]
  /** per series: month -> all mapped original documents */
  totals: Record<DemandSeries, Map<string, number>>
  /** per concept: per series: month -> documents mentioning it */
  mentions: Map<string, Record<DemandSeries, Map<string, number>>>
  /** concept id -> prefLabel, for every concept of the taxonomy */
  labels: Map<string, string>
}

/**
 * Monthly demand counts of every concept, both series, from documents and mentions.
 *
 * @example
 * ```ts
 * const demand = readMonthlyDemand(db)
 * demand.totals.external.get('2025-03') // => postings that month
 * ```
 */
export function readMonthlyDemand(db: Db): MonthlyDemand {
  const totals: MonthlyDemand['totals'] = { external: new Map(), internal: new Map() }
  const monthSet = new Set<string>()
  const totalRows = db
    .prepare(
      `SELECT kind, month, COUNT(*) AS total FROM documents
       WHERE duplicate_of IS NULL AND mapped_version IS NOT NULL
       GROUP BY kind, month`,
    )
    .all() as { kind: string; month: string; total: number }[]
  for (const row of totalRows) {
    const series = row.kind === KIND_OF.external ? 'external' : row.kind === KIND_OF.internal ? 'internal' : null
    if (!series) continue
    totals[series].set(row.month, row.total)
    monthSet.add(row.month)
  }
  const mentions: MonthlyDemand['mentions'] = new Map()
  const mentionRows = db
    .prepare(
      `SELECT m.concept_id AS concept_id, d.kind AS kind, d.month AS month, COUNT(*) AS n
       FROM mentions m JOIN documents d ON d.id = m.document_id
       WHERE d.duplicate_of IS NULL AND d.mapped_version IS NOT NULL
       GROUP BY m.concept_id, d.kind, d.month`,
    )
    .iterate() as IterableIterator<{ concept_id: string; kind: string; month: string; n: number }>
  for (const row of mentionRows) {
    const series = row.kind === KIND_OF.external ? 'external' : row.kind === KIND_OF.internal ? 'internal' : null
    if (!series) continue
    let perSeries = mentions.get(row.concept_id)
    if (!perSeries) {
      perSeries = { external: new Map(), internal: new Map() }
      mentions.set(row.concept_id, perSeries)
    }
    perSeries[series].set(row.month, row.n)
  }
  const labels = new Map(
    (db.prepare('SELECT id, pref_label FROM concepts ORDER BY id').all() as { id: string; pref_label: string }[]).map((row) => [row.id, row.pref_label]),
  )
  return { months: [...monthSet].sort(), totals, mentions, labels }
}

/**
 * Replace the demand table with the given rows (inside the caller's transaction).
 *
 * @example
 * ```ts
 * db.transaction(() => replaceDemand(db, rows))()
 * ```
 */
export function replaceDemand(db: Db, rows: Iterable<DemandRow>): number {
  db.prepare('DELETE FROM demand').run()
  const insert = db.prepare('INSERT INTO demand (concept_id, series, month, n, total) VALUES (?, ?, ?, ?, ?)')
  let count = 0
  for (const row of rows) {
    insert.run(row.concept_id, row.series, row.month, row.n, row.total)
    count++
  }
  return count
}

/** A fitted curve as stored (one row of `curves`). */
export interface CurveRow {
  concept_id: string
  state: string
  annual_growth: number | null
  growth_low: number | null
  growth_high: number | null
  half_life_months: number | null
  half_life_low: number | null
  /** null when the interval reaches "never halves" */
  half_life_high: number | null
  p_value: number | null
  p_adjusted: number | null
  latest_share: number | null
  forecast_share12: number | null
  forecast_method: string | null
  change_month: string | null
  emerged_month: string | null
  details_json: string
  fitted_at: string
}

/**
 * The stored state of every fitted skill (for state-change events).
 *
 * @example
 * ```ts
 * readCurveStates(db).get('hadoop') // => 'declining'
 * ```
 */
export function readCurveStates(db: Db): Map<string, string> {
  const rows = db.prepare('SELECT concept_id, state FROM curves').all() as { concept_id: string; state: string }[]
  return new Map(rows.map((row) => [row.concept_id, row.state]))
}

/**
 * Replace the curves table with the given rows (inside the caller's transaction): curves of skills
 * that are no longer fitted (removed from the taxonomy) go.
 *
 * @example
 * ```ts
 * db.transaction(() => replaceCurves(db, rows))()
 * ```
 */
export function replaceCurves(db: Db, rows: Iterable<CurveRow>): number {
  db.prepare('DELETE FROM curves').run()
  const insert = db.prepare(
    `INSERT INTO curves (concept_id, state, annual_growth, growth_low, growth_high, half_life_months, half_life_low,
       half_life_high, p_value, p_adjusted, latest_share, forecast_share12, forecast_method, change_month, emerged_month,
       details_json, fitted_at)
     VALUES (@concept_id, @state, @annual_growth, @growth_low, @growth_high, @half_life_months, @half_life_low,
       @half_life_high, @p_value, @p_adjusted, @latest_share, @forecast_share12, @forecast_method, @change_month,
       @emerged_month, @details_json, @fitted_at)`,
  )
  let count = 0
  for (const row of rows) {
    insert.run(row)
    count++
  }
  return count
}

/**
 * Stored curves with the skills' labels, for reports, in id order.
 *
 * @example
 * ```ts
 * readCurvesWithLabels(db)[0].label // => 'Adobe Flash'
 * ```
 */
export function readCurvesWithLabels(db: Db): (CurveRow & { label: string | null })[] {
  return db
    .prepare(
      `SELECT c.*, k.pref_label AS label FROM curves c LEFT JOIN concepts k ON k.id = c.concept_id ORDER BY c.concept_id`,
    )
    .all() as (CurveRow & { label: string | null })[]
}
