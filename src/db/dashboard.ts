/**
 * @module db/dashboard
 * Read-only queries behind the dashboard and its JSON/CSV API. Nothing here writes: changes go through
 * the owning stage's functions (taxonomy decisions, course snoozes). Statements are prepared once per
 * database handle and reused, so a page costs a handful of indexed lookups.
 */
import type { Statement } from 'better-sqlite3'
import { CONCEPTS_UNDER } from './ancestry.ts'
import type { Db } from './connection.ts'
import { isMonth } from '../curves/months.ts'
import type { CurveRow } from './curves.ts'

const CACHE = new WeakMap<Db, Map<string, Statement>>()

/** A prepared statement, cached per database handle. */
function stmt(db: Db, sql: string): Statement {
  let map = CACHE.get(db)
  if (!map) CACHE.set(db, (map = new Map()))
  let st = map.get(sql)
  if (!st) map.set(sql, (st = db.prepare(sql)))
  return st
}

// ---------------------------------------------------------------- overview

export interface OverviewDbRow {
  id: string
  label: string
  type: string
  state: string | null
  annual_growth: number | null
  growth_low: number | null
  growth_high: number | null
  half_life_months: number | null
  half_life_low: number | null
  half_life_high: number | null
  p_adjusted: number | null
  latest_share: number | null
  forecast_share12: number | null
  change_month: string | null
  rank: number | null
  score: number | null
  payload_json: string | null
}

/** The sortable and filterable fields of every skill, for the overview's in-memory index. */
export interface SkillKeyRow {
  id: string
  label: string
  type: string
  state: string | null
  growth: number | null
  halfLife: number | null
  share: number | null
  rank: number | null
  score: number | null
}

/**
 * All skills with only the fields the overview sorts and filters on. The curves and plan rows are
 * wide (JSON details over several pages each), so a join that looks each one up by key reads pages
 * in random order (seconds for 20,000 skills once they outgrow the page cache); three sequential
 * scans of the leading columns joined here in memory take a fraction of that. The server keeps the
 * result until the data changes (see dataStamp). Rows come in the concepts' stored order.
 */
export function skillKeys(db: Db): SkillKeyRow[] {
  const curves = new Map<string, { state: string; growth: number | null; halfLife: number | null; share: number | null }>()
  for (const r of stmt(db, 'SELECT concept_id AS id, state, annual_growth AS growth, half_life_months AS halfLife, latest_share AS share FROM curves').all() as {
    id: string
    state: string
    growth: number | null
    halfLife: number | null
    share: number | null
  }[])
    curves.set(r.id, r)
  const needs = new Map<string, { rank: number | null; score: number | null }>()
  for (const r of stmt(db, "SELECT key, rank, score FROM plan_outputs WHERE kind = 'need'").all() as { key: string; rank: number | null; score: number | null }[]) needs.set(r.key, r)
  return (stmt(db, 'SELECT id, pref_label AS label, type FROM concepts').all() as { id: string; label: string; type: string }[]).map((c) => {
    const cu = curves.get(c.id)
    const n = needs.get(c.id)
    return {
      id: c.id,
      label: c.label,
      type: c.type,
      state: cu?.state ?? null,
      growth: cu?.growth ?? null,
      halfLife: cu?.halfLife ?? null,
      share: cu?.share ?? null,
      rank: n?.rank ?? null,
      score: n?.score ?? null,
    }
  })
}

/** What the data stamp is made of: changes by this connection, and commits by any connection. */
export interface DataStamp {
  /** total_changes(): rows this connection changed, whether or not an event announced them */
  own: string
  /** the latest outbox event (every stage and dashboard change emits one) and SQLite's data_version
   *  (commits by other connections, e.g. a `tides run` in another process) */
  shared: string
}

/**
 * A stamp that changes whenever the data may have. Its two parts let a reader treat its own writes
 * (seen at once) apart from other processes' commits (which a dashboard may pick up a moment later).
 */
export function dataStamp(db: Db): DataStamp {
  const row = stmt(db, 'SELECT (SELECT COALESCE(MAX(id), 0) FROM events) AS e, total_changes() AS t').get() as { e: number; t: number }
  const version = db.pragma('data_version', { simple: true }) as number
  return { own: String(row.t), shared: `${row.e}:${version}` }
}

/** The plan's per-role ranking: role -> skill id -> rank and score (keys are JSON [role, skill id]). */
export function needRoleRanks(db: Db): Map<string, Map<string, { rank: number | null; score: number | null }>> {
  const out = new Map<string, Map<string, { rank: number | null; score: number | null }>>()
  for (const r of stmt(db, "SELECT key, rank, score FROM plan_outputs WHERE kind = 'need-role'").all() as { key: string; rank: number | null; score: number | null }[]) {
    let parsed: unknown
    try {
      parsed = JSON.parse(r.key)
    } catch {
      continue
    }
    if (!Array.isArray(parsed) || typeof parsed[0] !== 'string' || typeof parsed[1] !== 'string') continue
    if (!out.has(parsed[0])) out.set(parsed[0], new Map())
    out.get(parsed[0])!.set(parsed[1], { rank: r.rank, score: r.score })
  }
  return out
}

/** Skills a role requires (roles table). */
export function roleSkillIds(db: Db, role: string): string[] {
  return stmt(db, 'SELECT skill_id FROM roles WHERE role = ?').pluck().all(role) as string[]
}

/** Skills required by the roles that members of a team hold. */
export function teamSkillIds(db: Db, team: string): string[] {
  return stmt(db, 'SELECT DISTINCT r.skill_id FROM roles r WHERE r.role IN (SELECT DISTINCT p.role FROM people p WHERE p.team = ?)').pluck().all(team) as string[]
}

const OVERVIEW_COLUMNS = `c.id, c.pref_label AS label, c.type, cu.state, cu.annual_growth, cu.growth_low, cu.growth_high,
  cu.half_life_months, cu.half_life_low, cu.half_life_high, cu.p_adjusted, cu.latest_share, cu.forecast_share12,
  cu.change_month, n.rank, n.score, n.payload_json`

/**
 * Full overview rows of the given skills, in the order of `ids`. The need comes from plan_outputs
 * kind 'need' (key = skill id), or with a role from kind 'need-role' (key = JSON [role, skill id], as
 * the plan stage writes it).
 */
export function overviewRowsByIds(db: Db, ids: readonly string[], role?: string): OverviewDbRow[] {
  const out = new Map<string, OverviewDbRow>()
  const join = role
    ? "LEFT JOIN plan_outputs n ON n.kind = 'need-role' AND n.key = json_array(?, c.id)"
    : "LEFT JOIN plan_outputs n ON n.kind = 'need' AND n.key = c.id"
  for (let i = 0; i < ids.length; i += 100) {
    const chunk = ids.slice(i, i + 100)
    const marks = chunk.map(() => '?').join(',')
    const sql = `SELECT ${OVERVIEW_COLUMNS} FROM concepts c LEFT JOIN curves cu ON cu.concept_id = c.id ${join} WHERE c.id IN (${marks})`
    for (const r of stmt(db, sql).all(...(role ? [role] : []), ...chunk) as OverviewDbRow[]) out.set(r.id, r)
  }
  return ids.map((id) => out.get(id)).filter((r): r is OverviewDbRow => r !== undefined)
}

/** Every coverage row (the coverage sort needs all skills' figures to suppress consistently). */
export function allCoverage(db: Db): CoverageRow[] {
  return stmt(db, 'SELECT * FROM coverage ORDER BY skill_id, role').all() as CoverageRow[]
}

/** Roles and teams offered in the overview's filters. */
export function roleAndTeamChoices(db: Db): { roles: string[]; teams: string[] } {
  const col = (sql: string) => (stmt(db, sql).pluck().all() as string[]).filter((v) => v !== '')
  return { roles: col('SELECT DISTINCT role FROM roles ORDER BY role'), teams: col('SELECT DISTINCT team FROM people ORDER BY team') }
}

export interface DemandPoint {
  concept_id: string
  series: 'external' | 'internal'
  month: string
  n: number
  total: number
}


/**
 * Documents per month of a demand series (the running aggregate `demand_totals`, months in the
 * fit's YYYY-MM form only), oldest first.
 */
function seriesTotals(db: Db, series: 'external' | 'internal'): [string, number][] {
  const rows = stmt(db, 'SELECT month, total FROM demand_totals WHERE series = ? AND total > 0 ORDER BY month').raw().all(series) as [string, number][]
  return rows.filter(([month]) => isMonth(month))
}

/** The months of a demand series, oldest first. */
export function demandMonths(db: Db, series: 'external' | 'internal'): string[] {
  return seriesTotals(db, series).map(([month]) => month)
}

/**
 * Monthly demand of the given skills (one series or both), from the running aggregates the map
 * stage keeps (`demand_counts`, `demand_totals`): for each skill and series with at least one
 * mention, every month with documents of that series, n = 0 where none mentioned it. Rows come per
 * skill and series in month order (the series the fit stage reads, so the chart and the curve agree
 * once the fit has run after the last map).
 */
export function demandFor(db: Db, ids: readonly string[], series?: 'external' | 'internal'): DemandPoint[] {
  if (ids.length === 0) return []
  const kinds: ('external' | 'internal')[] = series ? [series] : ['external', 'internal']
  const totals = new Map(kinds.map((kind) => [kind, seriesTotals(db, kind)]))
  const out: DemandPoint[] = []
  // chunks keep the statement count small and the parameter list under SQLite's limit
  for (let i = 0; i < ids.length; i += 100) {
    const chunk = [...new Set(ids.slice(i, i + 100))].sort()
    const marks = chunk.map(() => '?').join(',')
    const filter = series ? 'AND series = ?' : ''
    const params: unknown[] = series ? [...chunk, series] : [...chunk]
    const counts = new Map<string, Map<string, number>>()
    for (const [id, kind, month, n] of stmt(db, `SELECT concept_id, series, month, n FROM demand_counts WHERE concept_id IN (${marks}) ${filter}`).raw().all(...params) as [string, string, string, number][]) {
      const key = `${id}\u0000${kind}`
      let byMonth = counts.get(key)
      if (!byMonth) counts.set(key, (byMonth = new Map()))
      byMonth.set(month, n)
    }
    for (const id of chunk) {
      for (const kind of kinds) {
        const byMonth = counts.get(`${id}\u0000${kind}`)
        if (!byMonth) continue
        for (const [month, total] of totals.get(kind)!) out.push({ concept_id: id, series: kind, month, n: byMonth.get(month) ?? 0, total })
      }
    }
  }
  return out
}

export interface CoverageRow {
  skill_id: string
  role: string
  required_theta: number
  headcount: number
  assessed: number
  unknown: number
  stale: number
  expected_meeting: number
  coverage: number | null
  expected_gap: number
  gap_low: number
  gap_high: number
  updated_at: string
}

/** Coverage rows of the given skills (all roles), or of one role when `role` is given. */
export function coverageFor(db: Db, ids: readonly string[], role?: string): CoverageRow[] {
  if (ids.length === 0) return []
  const out: CoverageRow[] = []
  for (let i = 0; i < ids.length; i += 100) {
    const chunk = ids.slice(i, i + 100)
    const marks = chunk.map(() => '?').join(',')
    const sql = `SELECT * FROM coverage WHERE skill_id IN (${marks}) ${role ? 'AND role = ?' : ''} ORDER BY skill_id, role`
    out.push(...(stmt(db, sql).all(...chunk, ...(role ? [role] : [])) as CoverageRow[]))
  }
  return out
}

// ---------------------------------------------------------------- one skill

export interface ConceptRow {
  id: string
  pref_label: string
  type: string
  origin: string
}

export function conceptById(db: Db, id: string): ConceptRow | undefined {
  return stmt(db, 'SELECT id, pref_label, type, origin FROM concepts WHERE id = ?').get(id) as ConceptRow | undefined
}

/** Concepts whose prefLabel is `label` (ignoring case). */
export function conceptsByLabel(db: Db, label: string): ConceptRow[] {
  return stmt(db, 'SELECT id, pref_label, type, origin FROM concepts WHERE pref_label = ? COLLATE NOCASE ORDER BY id LIMIT 2').all(label) as ConceptRow[]
}

export function conceptLabels(db: Db, id: string): { label: string; kind: string }[] {
  return stmt(db, "SELECT label, kind FROM labels WHERE concept_id = ? AND kind != 'pref' ORDER BY kind, label").all(id) as { label: string; kind: string }[]
}

export function broaderOf(db: Db, id: string): { id: string; label: string }[] {
  return stmt(
    db,
    'SELECT b.id, b.pref_label AS label FROM concept_broader cb JOIN concepts b ON b.id = cb.broader_id WHERE cb.concept_id = ? ORDER BY b.pref_label',
  ).all(id) as { id: string; label: string }[]
}

export type { CurveRow }

export function curveFor(db: Db, id: string): CurveRow | undefined {
  return stmt(db, 'SELECT * FROM curves WHERE concept_id = ?').get(id) as CurveRow | undefined
}

/** How {@link latestPostingsSql} finds a skill's latest postings. */
export type LatestPostingsWay = 'by-skill' | 'by-month'

/**
 * SQL (after {@link CONCEPTS_UNDER}; parameters: the skill, the first month, the limit) selecting
 * `columns` of the latest original postings that mention a skill or a skill below it (roll-up,
 * db/ancestry.ts), newest first. `by-skill` walks every posting of the skill (the mentions-by-concept
 * index), `by-month` every posting of the months from the first month on (the documents-by-month
 * index), looking up each one's mentions. Both give the same rows once the months from the first
 * month on hold the limit's number of the skill's postings.
 */
function latestPostingsSql(columns: string, way: LatestPostingsWay): string {
  return way === 'by-skill'
    ? `SELECT ${columns} FROM documents d
       WHERE d.id IN (SELECT m.document_id FROM mentions m WHERE m.concept_id IN (SELECT id FROM under))
         AND +d.month >= ? AND +d.kind = 'posting' AND d.duplicate_of IS NULL
       ORDER BY d.posted_at DESC, d.id DESC LIMIT ?`
    : `SELECT ${columns} FROM documents d
       WHERE d.kind = 'posting' AND d.month >= ? AND d.duplicate_of IS NULL
         AND EXISTS (SELECT 1 FROM mentions m WHERE m.document_id = d.id AND +m.concept_id IN (SELECT id FROM under))
       ORDER BY d.posted_at DESC, d.id DESC LIMIT ?`
}

/**
 * The cheaper way to read a skill's `want` latest postings, from the demand aggregates: the latest
 * months that hold `want` of its postings (counted with roll-up, as the SQL reads them), and whether
 * all postings of those months are fewer than all of the skill's postings. At a million postings,
 * the most common skills' examples and neighbours took 1.8 s and 2.1 s by skill (every posting of
 * the skill looked up) and 0.21 s and 0.27 s by month (the last month's 45,787 postings). Without
 * counts (not mapped yet): every month, by skill.
 */
export function latestPostingsWay(db: Db, id: string, want: number): { since: string; way: LatestPostingsWay } {
  const months = stmt(db, "SELECT month, n FROM demand_counts WHERE concept_id = ? AND series = 'external' ORDER BY month DESC").raw().all(id) as [string, number][]
  let since = ''
  let seen = 0
  let all = 0
  for (const [month, n] of months) {
    all += n
    if (seen < want) {
      seen += n
      since = month
    }
  }
  if (seen < want) return { since: '', way: 'by-skill' }
  const inMonths = stmt(db, "SELECT COALESCE(SUM(total), 0) FROM demand_totals WHERE series = 'external' AND month >= ?").pluck().get(since) as number
  return { since, way: inMonths < all ? 'by-month' : 'by-skill' }
}

/**
 * Skills mentioned in the same recent postings as this one: how many of this skill's postings also
 * mention the other. Counts only originals (not reposts) among the skill's latest `window` postings
 * (read the cheaper of two ways, {@link latestPostingsWay}), so the cost stays bounded for very
 * common skills; neighbours count only where the text names them (not broader skills filled in by
 * roll-up, which would always co-occur). `way` is for tests.
 */
export function coMentioned(
  db: Db,
  id: string,
  limit = 10,
  window = 2000,
  way = latestPostingsWay(db, id, window),
): { id: string; label: string; state: string | null; together: number; base: number }[] {
  // the window read once (MATERIALIZED), for its size and for the neighbours; no rows when it is empty
  return stmt(
    db,
    `${CONCEPTS_UNDER}, mine AS MATERIALIZED (${latestPostingsSql('d.id', way.way)})
     SELECT o.concept_id AS id, c.pref_label AS label, cu.state, COUNT(*) AS together, (SELECT COUNT(*) FROM mine) AS base
     FROM mine JOIN mentions o ON o.document_id = mine.id AND o.concept_id != ?
     JOIN concepts c ON c.id = o.concept_id LEFT JOIN curves cu ON cu.concept_id = o.concept_id
     GROUP BY o.concept_id ORDER BY together DESC, o.concept_id LIMIT ?`,
  ).all(id, way.since, window, id, limit) as { id: string; label: string; state: string | null; together: number; base: number }[]
}

export interface PostingRow {
  id: number
  title: string
  body: string
  posted_at: string
  organisation: string | null
  location: string | null
  source_id: string
}

/** The latest original postings that mention the skill or a skill below it (roll-up); `way` is for tests. */
export function examplePostings(db: Db, id: string, limit = 5, way = latestPostingsWay(db, id, limit)): PostingRow[] {
  const columns = 'd.id, d.title, substr(d.body, 1, 600) AS body, d.posted_at, d.organisation, d.location, d.source_id'
  return stmt(db, `${CONCEPTS_UNDER} ${latestPostingsSql(columns, way.way)}`).all(id, way.since, limit) as PostingRow[]
}

export interface CourseRowDb {
  course_id: string
  title: string
  owner: string
  last_reviewed: string | null
  enrollments_12m: number | null
  enrollments_prev_12m: number | null
}

/** Courses tied to the skill (by resolved id), with whether the tie was inferred from the title. */
export function coursesForSkill(db: Db, id: string): (CourseRowDb & { inferred: number })[] {
  return stmt(
    db,
    `SELECT c.course_id, c.title, c.owner, c.last_reviewed, c.enrollments_12m, c.enrollments_prev_12m, MAX(cs.inferred) AS inferred
     FROM course_skills cs JOIN courses c ON c.course_id = cs.course_id WHERE cs.skill_id = ?
     GROUP BY c.course_id ORDER BY c.title`,
  ).all(id) as (CourseRowDb & { inferred: number })[]
}

// ---------------------------------------------------------------- plan outputs and courses

export interface PlanOutputRow {
  kind: string
  key: string
  rank: number | null
  score: number | null
  payload_json: string
  updated_at: string
}

/** Plan outputs of one kind, ranked first, then by key. */
export function planOutputs(db: Db, kind: string, limit = 1000, offset = 0): PlanOutputRow[] {
  return stmt(db, 'SELECT * FROM plan_outputs WHERE kind = ? ORDER BY rank IS NULL, rank, key LIMIT ? OFFSET ?').all(kind, limit, offset) as PlanOutputRow[]
}

export function planOutput(db: Db, kind: string, key: string): PlanOutputRow | undefined {
  return stmt(db, 'SELECT * FROM plan_outputs WHERE kind = ? AND key = ?').get(kind, key) as PlanOutputRow | undefined
}

export function allCourses(db: Db): (CourseRowDb & { skills: string | null })[] {
  return stmt(
    db,
    `SELECT c.course_id, c.title, c.owner, c.last_reviewed, c.enrollments_12m, c.enrollments_prev_12m,
       (SELECT group_concat(COALESCE(cs.skill_id, cs.skill_ref), '|') FROM course_skills cs WHERE cs.course_id = c.course_id) AS skills
     FROM courses c ORDER BY c.owner, c.title`,
  ).all() as (CourseRowDb & { skills: string | null })[]
}

export function courseById(db: Db, id: string): CourseRowDb | undefined {
  return stmt(db, 'SELECT course_id, title, owner, last_reviewed, enrollments_12m, enrollments_prev_12m FROM courses WHERE course_id = ?').get(id) as
    | CourseRowDb
    | undefined
}

// ---------------------------------------------------------------- taxonomy review

export interface CandidateRow {
  term: string
  score: number
  recent_df: number
  earlier_df: number
  trend_json: string
  examples_json: string
  status: 'open' | 'accepted' | 'dismissed'
  decision_json: string | null
  updated_at: string
}

export function candidates(db: Db, status?: string, limit = 500): CandidateRow[] {
  if (status) return stmt(db, 'SELECT * FROM candidate_terms WHERE status = ? ORDER BY score DESC, term LIMIT ?').all(status, limit) as CandidateRow[]
  return stmt(db, "SELECT * FROM candidate_terms ORDER BY status = 'open' DESC, score DESC, term LIMIT ?").all(limit) as CandidateRow[]
}

export function candidateByTerm(db: Db, term: string): CandidateRow | undefined {
  return stmt(db, 'SELECT * FROM candidate_terms WHERE term = ?').get(term) as CandidateRow | undefined
}

export function candidateCounts(db: Db): Record<string, number> {
  const rows = stmt(db, 'SELECT status, COUNT(*) AS n FROM candidate_terms GROUP BY status').all() as { status: string; n: number }[]
  return Object.fromEntries(rows.map((r) => [r.status, r.n]))
}

/**
 * Concepts for the "altLabel of" choice: those whose id or prefLabel contains `text` (all when
 * empty), prefix matches first, then by label.
 */
export function conceptChoices(db: Db, text = '', limit = 200): { id: string; label: string }[] {
  const like = `%${text.replace(/[\\%_]/g, (m) => `\\${m}`)}%`
  const prefix = `${text.replace(/[\\%_]/g, (m) => `\\${m}`)}%`
  return stmt(
    db,
    `SELECT id, pref_label AS label FROM concepts
     WHERE pref_label LIKE ? ESCAPE '\\' OR id LIKE ? ESCAPE '\\'
     ORDER BY (pref_label LIKE ? ESCAPE '\\' OR id LIKE ? ESCAPE '\\') DESC, pref_label COLLATE NOCASE, id LIMIT ?`,
  ).all(like, like, prefix, prefix, limit) as { id: string; label: string }[]
}

// ---------------------------------------------------------------- sources, runs and events

export interface SourceRow {
  id: string
  kind: string
  location: string
  schedule: string | null
  documents: number
}

export function sourcesWithCounts(db: Db): SourceRow[] {
  return stmt(
    db,
    `SELECT s.id, s.kind, s.location, s.schedule, (SELECT COUNT(*) FROM documents d WHERE d.source_id = s.id) AS documents FROM sources s ORDER BY s.id`,
  ).all() as SourceRow[]
}

/** Failed or partial runs per source (and stage) over the latest `window` runs of each. */
export function runFailures(db: Db): { stage: string; source_id: string | null; failed: number; runs: number }[] {
  return stmt(
    db,
    `SELECT stage, source_id, SUM(status IN ('failed','partial')) AS failed, COUNT(*) AS runs FROM job_runs GROUP BY stage, source_id`,
  ).all() as { stage: string; source_id: string | null; failed: number; runs: number }[]
}

export interface EventWithDelivery {
  id: number
  type: string
  payload_json: string
  created_at: string
  delivered: number
  pending: number
  failed: number
  last_error: string | null
}

/** The latest events with their webhook delivery counts per status. */
export function eventsWithDelivery(db: Db, limit = 100): EventWithDelivery[] {
  return stmt(
    db,
    `SELECT e.id, e.type, e.payload_json, e.created_at,
       COALESCE(SUM(w.status = 'delivered'), 0) AS delivered, COALESCE(SUM(w.status = 'pending'), 0) AS pending,
       COALESCE(SUM(w.status = 'failed'), 0) AS failed, MAX(w.last_error) AS last_error
     FROM (SELECT * FROM events ORDER BY id DESC LIMIT ?) e LEFT JOIN webhook_deliveries w ON w.event_id = e.id
     GROUP BY e.id ORDER BY e.id DESC`,
  ).all(limit) as EventWithDelivery[]
}

/** The latest event of a type, if any. */
export function latestEventOf(db: Db, type: string): { id: number; payload_json: string; created_at: string } | undefined {
  return stmt(db, 'SELECT id, payload_json, created_at FROM events WHERE type = ? ORDER BY id DESC LIMIT 1').get(type) as
    | { id: number; payload_json: string; created_at: string }
    | undefined
}

/** How far a consumer (e.g. `stage:map`) has handled the outbox. */
export function consumerCursor(db: Db, consumer: string): number {
  const row = stmt(db, 'SELECT last_event_id FROM event_cursors WHERE consumer = ?').get(consumer) as { last_event_id: number } | undefined
  return row?.last_event_id ?? 0
}

/** The first run of a stage that started at or after `sinceIso`. */
export function firstRunSince(db: Db, stage: string, sinceIso: string): { id: number; status: string; started_at: string; ended_at: string | null } | undefined {
  return stmt(db, 'SELECT id, status, started_at, ended_at FROM job_runs WHERE stage = ? AND started_at >= ? ORDER BY id LIMIT 1').get(stage, sinceIso) as
    | { id: number; status: string; started_at: string; ended_at: string | null }
    | undefined
}
