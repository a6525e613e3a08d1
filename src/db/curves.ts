/**
 * @module db/curves
 * SQL of demand and curves: the running demand aggregates (n per concept, series and month; N per
 * series and month) that writers of mentions keep in step, their full recomputation from documents
 * and mentions (after dedupe and roll-up), and the demand series and fitted curves the fit stage
 * writes. Reposts (duplicate_of set) and documents not yet mapped are left out of both the counts
 * and the totals, so a share is always "mapped original documents that mention the skill, of all
 * mapped original documents".
 */
import { ROLL_UP } from './ancestry.ts'
import type { Db } from './connection.ts'

export type DemandSeries = 'external' | 'internal'

/** Document kind behind each demand series. */
const KIND_OF: Record<DemandSeries, string> = { external: 'posting', internal: 'request' }

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

/** Fills a MonthlyDemand from (series, month, total) and (concept, series, month, n) rows. */
function collectDemand(
  db: Db,
  totalRows: Iterable<{ series: string; month: string; total: number }>,
  countRows: Iterable<[string, string, string, number]>,
): MonthlyDemand {
  const totals: MonthlyDemand['totals'] = { external: new Map(), internal: new Map() }
  const monthSet = new Set<string>()
  for (const row of totalRows) {
    if (row.series !== 'external' && row.series !== 'internal') continue
    totals[row.series].set(row.month, row.total)
    monthSet.add(row.month)
  }
  const mentions: MonthlyDemand['mentions'] = new Map()
  let lastId = ''
  let perSeries: Record<DemandSeries, Map<string, number>> | undefined
  for (const [conceptId, series, month, n] of countRows) {
    if (series !== 'external' && series !== 'internal') continue
    if (conceptId !== lastId || !perSeries) {
      perSeries = mentions.get(conceptId)
      if (!perSeries) {
        perSeries = { external: new Map(), internal: new Map() }
        mentions.set(conceptId, perSeries)
      }
      lastId = conceptId
    }
    perSeries[series].set(month, n)
  }
  const labels = new Map(readConceptLabelList(db))
  return { months: [...monthSet].sort(), totals, mentions, labels }
}

const MONTH_GLOB = '[0-9][0-9][0-9][0-9]-[0-9][0-9]'

/** Every (series, month, total) row of the demand totals. */
export function readDemandTotals(db: Db): { series: string; month: string; total: number }[] {
  return db.prepare('SELECT series, month, total FROM demand_totals').all() as { series: string; month: string; total: number }[]
}

/**
 * The fit stage's read of `demand_counts`: per concept, per series, its counts on the given months
 * as one array aligned to them (0 where there is no row; rows of other months are left out). Its
 * cost depends on concepts x months, not on the number of documents, and equals
 * {@link recomputeMonthlyDemand}'s counts whenever every writer of mentions and documents keeps the
 * aggregates (see {@link DemandDelta}). One row per concept and series, months and counts joined
 * into one string: a row handed from SQLite to JavaScript costs about a microsecond. Read straight
 * into arrays (no map per concept and series, no array per row): with the fit's inputs built from
 * them, 0.8-1.1 s -> 0.36-0.44 s on the N = 1,000,000 benchmark database.
 *
 * @example
 * ```ts
 * readDemandCountArrays(db, ['2025-01', '2025-02']).get('sql')?.external // => [12, 15]
 * ```
 */
export function readDemandCountArrays(db: Db, months: readonly string[]): Map<string, Partial<Record<DemandSeries, number[]>>> {
  const position = new Map(months.map((month, i) => [month, i]))
  const out = new Map<string, Partial<Record<DemandSeries, number[]>>>()
  const grouped = db
    .prepare(`SELECT concept_id, series, group_concat(month || ' ' || n, ' ') FROM demand_counts WHERE month GLOB '${MONTH_GLOB}' GROUP BY concept_id, series`)
    .raw()
    .iterate() as IterableIterator<[string, string, string]>
  for (const [conceptId, series, joined] of grouped) {
    if (series !== 'external' && series !== 'internal') continue
    const counts = new Array<number>(months.length).fill(0)
    // "month n month n ...": the months have no spaces (the GLOB above)
    for (let from = 0; from < joined.length; ) {
      const gap = joined.indexOf(' ', from)
      const next = joined.indexOf(' ', gap + 1)
      const end = next < 0 ? joined.length : next
      const at = position.get(joined.slice(from, gap))
      if (at !== undefined) counts[at] = Number(joined.slice(gap + 1, end))
      from = end + 1
    }
    let perSeries = out.get(conceptId)
    if (!perSeries) out.set(conceptId, (perSeries = {}))
    perSeries[series] = counts
  }
  return out
}

/** Every concept's id and prefLabel, in id order. */
export function readConceptLabelList(db: Db): [string, string][] {
  return db.prepare('SELECT id, pref_label FROM concepts ORDER BY id').raw().all() as [string, string][]
}

/**
 * SQL: the document row `alias` is mapped (not waiting in the map's queue, migration 9); with
 * duplicate_of IS NULL, it counts in the demand aggregates.
 */
export const isMapped = (alias: string) => `NOT EXISTS (SELECT 1 FROM unmapped_documents u WHERE u.id = ${alias}.id)`
const MAPPED = isMapped('d')
const TOTALS_FROM_DOCUMENTS = `SELECT CASE kind WHEN 'posting' THEN 'external' ELSE 'internal' END AS series, month, COUNT(*) AS total
  FROM documents d WHERE duplicate_of IS NULL AND kind IN ('posting','request') AND ${MAPPED}
  GROUP BY kind, month`
// a document counts once for each concept it mentions and each concept above them (db/ancestry.ts)
const COUNTS_FROM_MENTIONS = `${ROLL_UP}
  SELECT r.counted_id AS concept_id, CASE d.kind WHEN 'posting' THEN 'external' ELSE 'internal' END AS series, d.month AS month, COUNT(DISTINCT d.id) AS n
  FROM mentions m JOIN roll_up r ON r.concept_id = m.concept_id JOIN documents d ON d.id = m.document_id
  WHERE d.duplicate_of IS NULL AND d.kind IN ('posting','request') AND ${MAPPED}
  GROUP BY r.counted_id, d.kind, d.month`

/**
 * Monthly demand of every concept recomputed from documents and mentions (a document
 * counted once per concept after roll-up; reposts and unmapped documents left out). It reads every
 * mention, so its cost grows with the corpus: the reference for tests and for
 * {@link rebuildDemandCounts}, not for the fit stage.
 *
 * @example
 * ```ts
 * recomputeMonthlyDemand(db).totals.external.get('2025-03') // => postings that month, as demand_totals has it
 * ```
 */
export function recomputeMonthlyDemand(db: Db): MonthlyDemand {
  const totalRows = db.prepare(TOTALS_FROM_DOCUMENTS).all() as { series: string; month: string; total: number }[]
  const countRows = db.prepare(`${COUNTS_FROM_MENTIONS} ORDER BY 1, 2, 3`).raw().iterate() as IterableIterator<[string, string, string, number]>
  return collectDemand(db, totalRows, countRows)
}

/**
 * Repair: recomputes the demand aggregates from documents and mentions (inside the caller's
 * transaction, or its own). Migration 3 fills them the same way.
 * @returns the number of (concept, series, month) rows written
 *
 * @example
 * ```ts
 * rebuildDemandCounts(db) // => 48213
 * ```
 */
export function rebuildDemandCounts(db: Db): number {
  return db.transaction(() => {
    clearDemandCounts(db)
    db.prepare(`INSERT INTO demand_totals (series, month, total) ${TOTALS_FROM_DOCUMENTS}`).run()
    // every month with documents that count gets a version (clearDemandCounts moved on the others)
    db.prepare(`INSERT INTO month_versions (kind, month, version) SELECT CASE series WHEN 'external' THEN 'posting' ELSE 'request' END, month, 1 FROM demand_totals WHERE true ON CONFLICT DO NOTHING`).run()
    return db.prepare(`INSERT INTO demand_counts (concept_id, series, month, n) ${COUNTS_FROM_MENTIONS}`).run().changes
  })()
}

/**
 * A number that grows whenever the demand aggregates change: the sum of the month versions
 * (migration 13), one of which every writer moves on with each change (DemandDelta.apply,
 * clearDemandCounts, rebuildDemandCounts); no writer deletes a version. A hand-made SQL change of
 * the aggregates is not seen (`tides run fit --rebuild` recomputes them).
 */
export function demandVersion(db: Db): number {
  return db.prepare('SELECT COALESCE(SUM(version), 0) FROM month_versions').pluck().get() as number
}

/** Empties the demand aggregates (when every document becomes unmapped at once); every month's version moves on. */
export function clearDemandCounts(db: Db): void {
  db.prepare('DELETE FROM demand_totals').run()
  db.prepare('DELETE FROM demand_counts').run()
  db.prepare('UPDATE month_versions SET version = version + 1').run()
}

/** The series a document kind counts in (null for a kind outside both). */
export function seriesOfKind(kind: string): DemandSeries | null {
  return kind === KIND_OF.external ? 'external' : kind === KIND_OF.internal ? 'internal' : null
}

/**
 * Changes to the demand aggregates collected in memory while a batch of documents is written, then
 * applied in one pass per key ({@link DemandDelta.apply}) inside the same transaction. Every
 * (kind, month) a document started or stopped counting in has its row of `month_versions` moved on
 * (migration 13): what is computed from a month's counted documents and kept (db/title-months.ts)
 * is stale when the month's version differs from the one it was computed at. A document
 * "counts" while it is an original (duplicate_of IS NULL) and mapped (not in `unmapped_documents`):
 * a writer calls {@link DemandDelta.document} with +1 when a document starts to count (with its
 * concepts after roll-up) and with -1 when it stops or before its mentions change.
 *
 * @example
 * ```ts
 * const delta = new DemandDelta()
 * delta.document('posting', '2025-03', ['sql', 'data-skills'], +1)
 * delta.apply(db) // => 3 rows touched
 * ```
 */
export class DemandDelta {
  /** per series and month (key "series\0month"), the change per concept: one key string per document, not per mention */
  private readonly counts = new Map<string, Map<string, number>>()
  private readonly totals = new Map<string, number>()

  /** Adds (sign +1) or removes (sign -1) one document of a kind and month with these concepts. */
  document(kind: string, month: string, conceptIds: Iterable<string>, sign: 1 | -1): void {
    const series = seriesOfKind(kind)
    if (!series) return
    const key = `${series}\u0000${month}`
    this.totals.set(key, (this.totals.get(key) ?? 0) + sign)
    let perConcept = this.counts.get(key)
    if (!perConcept) {
      perConcept = new Map()
      this.counts.set(key, perConcept)
    }
    for (const id of conceptIds) perConcept.set(id, (perConcept.get(id) ?? 0) + sign)
  }

  get size(): number {
    let n = this.totals.size
    for (const perConcept of this.counts.values()) n += perConcept.size
    return n
  }

  /**
   * Writes the collected changes (in primary-key order; rows that reach zero are deleted, as
   * the full recomputation has no zero rows) and forgets them. Call inside the transaction that
   * changed the documents and mentions.
   * @returns the number of aggregate rows touched
   */
  apply(db: Db): number {
    let touched = 0
    const counts: [string, string, string, number][] = []
    for (const [key, perConcept] of this.counts) {
      const [series, month] = key.split('\u0000') as [string, string]
      for (const [id, d] of perConcept) if (d !== 0) counts.push([id, series, month, d])
    }
    const order = (a: string, b: string) => (a < b ? -1 : a > b ? 1 : 0)
    counts.sort((a, b) => order(a[0], b[0]) || order(a[1], b[1]) || order(a[2], b[2]))
    // single-row statements: multi-row INSERTs measured slower here (see saveMappings in db/taxonomy.ts)
    const upsert = db.prepare('INSERT INTO demand_counts (concept_id, series, month, n) VALUES (?, ?, ?, ?) ON CONFLICT DO UPDATE SET n = n + excluded.n')
    for (const [id, series, month, d] of counts) upsert.run(id, series, month, d)
    touched += counts.length
    if (counts.some((c) => c[3] < 0)) {
      const del = db.prepare('DELETE FROM demand_counts WHERE concept_id = ? AND series = ? AND month = ? AND n = 0')
      const negative = db.prepare('SELECT n FROM demand_counts WHERE concept_id = ? AND series = ? AND month = ?').pluck()
      for (const [id, series, month, d] of counts) {
        if (d >= 0) continue
        if (del.run(id, series, month).changes === 0 && ((negative.get(id, series, month) as number | undefined) ?? 0) < 0) {
          throw new Error(`demand aggregate for ${id} ${series} ${month} fell below zero: repair with 'tides run fit --rebuild'`)
        }
      }
    }
    const totalUpsert = db.prepare('INSERT INTO demand_totals (series, month, total) VALUES (?, ?, ?) ON CONFLICT DO UPDATE SET total = total + excluded.total')
    const totalZero = db.prepare('DELETE FROM demand_totals WHERE series = ? AND month = ? AND total = 0')
    const totalNow = db.prepare('SELECT total FROM demand_totals WHERE series = ? AND month = ?').pluck()
    for (const [key, d] of this.totals) {
      if (d === 0) continue
      const [series, month] = key.split('\u0000') as [string, string]
      totalUpsert.run(series, month, d)
      if (d < 0 && totalZero.run(series, month).changes === 0 && ((totalNow.get(series, month) as number | undefined) ?? 0) < 0) {
        throw new Error(`demand total for ${series} ${month} fell below zero: repair with 'tides run fit --rebuild'`)
      }
      touched++
    }
    const version = db.prepare('INSERT INTO month_versions (kind, month, version) VALUES (?, ?, 1) ON CONFLICT DO UPDATE SET version = version + 1')
    for (const key of new Set([...this.totals.keys(), ...this.counts.keys()])) {
      const [series, month] = key.split('\u0000') as [DemandSeries, string]
      version.run(KIND_OF[series], month)
    }
    this.counts.clear()
    this.totals.clear()
    return touched
  }
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
  /** the month series in binary (curves/stored-series.ts; migration 10); null in older rows */
  series?: Uint8Array | null
  fitted_at: string
}

/** The stored states, read from the index on (state, concept_id) alone (migration 11), not the curve rows. */
export const CURVE_STATES_SQL = 'SELECT concept_id, state FROM curves'

/**
 * The stored state of every fitted skill (for state-change events).
 *
 * @example
 * ```ts
 * readCurveStates(db).get('hadoop') // => 'declining'
 * ```
 */
export function readCurveStates(db: Db): Map<string, string> {
  const rows = db.prepare(CURVE_STATES_SQL).all() as { concept_id: string; state: string }[]
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
  // positional parameters: binding by name costs a lookup per parameter per row
  const insert = db.prepare(
    `INSERT INTO curves (concept_id, state, annual_growth, growth_low, growth_high, half_life_months, half_life_low,
       half_life_high, p_value, p_adjusted, latest_share, forecast_share12, forecast_method, change_month, emerged_month,
       details_json, series, fitted_at)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  )
  let count = 0
  for (const r of rows) {
    insert.run(
      r.concept_id, r.state, r.annual_growth, r.growth_low, r.growth_high, r.half_life_months, r.half_life_low, r.half_life_high, r.p_value,
      r.p_adjusted, r.latest_share, r.forecast_share12, r.forecast_method, r.change_month, r.emerged_month, r.details_json,
      r.series ?? null, r.fitted_at,
    )
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
