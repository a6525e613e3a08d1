/**
 * Small synthetic tables for the plan tests, inserted straight into the schema (the plan stage is
 * written against the tables, not the modules of the stages that fill them).
 */
import { parseConfig, type Config } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { upsertCourses, upsertImportedAbilities, upsertPeople, upsertRoles } from '../../src/db/workforce.ts'
import type { CurveRecord } from '../../src/db/plan.ts'
import { mentionListWriter } from '../../src/db/mention-lists.ts'

export function freshDb(): Db {
  return openDb(':memory:')
}

export function testConfig(plan: Record<string, unknown> = {}): Config {
  return parseConfig({ db: ':memory:', plan })
}

export function addConcept(db: Db, id: string, label: string, alt: string[] = []): void {
  db.prepare("INSERT INTO concepts(id, pref_label, type) VALUES (?, ?, 'hard')").run(id, label)
  db.prepare("INSERT INTO labels(concept_id, label, kind) VALUES (?, ?, 'pref')").run(id, label)
  for (const a of alt) db.prepare("INSERT INTO labels(concept_id, label, kind) VALUES (?, ?, 'alt')").run(id, a)
}

export type CurveInput = Partial<CurveRecord> & { concept_id: string; state: string }

export function addCurve(db: Db, c: CurveInput): void {
  db.prepare(
    `INSERT INTO curves(concept_id, state, annual_growth, growth_low, growth_high, half_life_months, half_life_low, half_life_high,
                        p_value, p_adjusted, latest_share, forecast_share12, details_json, fitted_at)
     VALUES (@concept_id, @state, @annual_growth, @growth_low, @growth_high, @half_life_months, @half_life_low, @half_life_high,
             @p_value, @p_adjusted, @latest_share, @forecast_share12, @details_json, @fitted_at)`,
  ).run({
    annual_growth: null,
    growth_low: null,
    growth_high: null,
    half_life_months: null,
    half_life_low: null,
    half_life_high: null,
    p_value: null,
    p_adjusted: null,
    latest_share: null,
    forecast_share12: null,
    details_json: '{}',
    fitted_at: '2026-01-01T00:00:00Z',
    ...c,
  })
}

export interface CoverageInput {
  skill_id: string
  role: string
  headcount: number
  assessed: number
  expected_meeting: number
  required_theta?: number
}

/** A coverage row as the ability stage writes it: gap = assessed − Σp, unknown = headcount − assessed. */
export function addCoverage(db: Db, c: CoverageInput): void {
  const gap = c.assessed - c.expected_meeting
  db.prepare(
    `INSERT INTO coverage(skill_id, role, required_theta, headcount, assessed, unknown, expected_meeting, coverage, expected_gap, gap_low, gap_high, updated_at)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, '2026-01-01T00:00:00Z')`,
  ).run(c.skill_id, c.role, c.required_theta ?? 0, c.headcount, c.assessed, c.headcount - c.assessed, c.expected_meeting, c.assessed ? c.expected_meeting / c.assessed : null, gap, Math.max(0, gap - 1), gap + 1)
}

let docCounter = 0

export function ensureSource(db: Db): void {
  db.prepare("INSERT OR IGNORE INTO sources(id, kind, location) VALUES ('test', 'import', 'test')").run()
}

/** A posting (or request) in a month, mentioning the given concepts. */
export function addDocument(db: Db, doc: { month: string; concepts: string[]; title?: string; occupation?: string | null; kind?: 'posting' | 'request' }): number {
  ensureSource(db)
  docCounter++
  const id = Number(
    db
      .prepare(
        `INSERT INTO documents(source_id, external_id, kind, title, body, posted_at, month, text_hash, occupation)
         VALUES ('test', ?, ?, ?, '', ?, ?, ?, ?)`,
      )
      .run(`d${docCounter}`, doc.kind ?? 'posting', doc.title ?? '', `${doc.month}-15`, doc.month, `h${docCounter}`, doc.occupation ?? null).lastInsertRowid,
  )
  for (const c of new Set(doc.concepts)) db.prepare("INSERT INTO mentions(document_id, concept_id, count, via) VALUES (?, ?, 1, 'text')").run(id, c)
  // and its row of mention_lists, as the map stage writes it
  const direct = [...new Set(doc.concepts)]
  mentionListWriter(db, direct)(doc.kind ?? 'posting', doc.month, id, direct)
  // a mapped original: counted in the demand aggregates as the map stage would count it
  db.prepare('DELETE FROM unmapped_documents WHERE id = ?').run(id)
  const series = (doc.kind ?? 'posting') === 'posting' ? 'external' : 'internal'
  db.prepare('INSERT INTO demand_totals(series, month, total) VALUES (?, ?, 1) ON CONFLICT DO UPDATE SET total = total + 1').run(series, doc.month)
  for (const c of new Set(doc.concepts)) {
    db.prepare('INSERT INTO demand_counts(concept_id, series, month, n) VALUES (?, ?, ?, 1) ON CONFLICT DO UPDATE SET n = n + 1').run(c, series, doc.month)
  }
  return id
}

export function addPeople(db: Db, role: string, ids: string[]): void {
  upsertPeople(db, ids.map((person_id) => ({ person_id, role, team: '' })))
}

export function addRole(db: Db, role: string, skill_id: string, required_theta = 0): void {
  upsertRoles(db, [{ role, skill_id, required_theta }])
}

export function addAbility(db: Db, person_id: string, skill_id: string, theta: number): void {
  upsertImportedAbilities(db, [{ person_id, skill_id, theta, se: 0.3, assessed_at: '2025-06-01' }])
}

export function addCourse(db: Db, c: { course_id: string; title: string; skills: string[]; enrollments_12m?: number | null; enrollments_prev_12m?: number | null; owner?: string }): void {
  upsertCourses(db, [
    { course_id: c.course_id, title: c.title, skills: c.skills, last_reviewed: null, enrollments_12m: c.enrollments_12m ?? null, enrollments_prev_12m: c.enrollments_prev_12m ?? null, owner: c.owner ?? 'owner' },
  ])
}

/** Months 'YYYY-MM' from start, n of them. */
export function months(start: string, n: number): string[] {
  const [y, m] = start.split('-').map(Number) as [number, number]
  return Array.from({ length: n }, (_, i) => {
    const idx = y * 12 + m - 1 + i
    return `${Math.floor(idx / 12)}-${String((idx % 12) + 1).padStart(2, '0')}`
  })
}
