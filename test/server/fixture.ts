/**
 * @module test/server/fixture
 * A small, deterministic dashboard fixture for the fictional Fernhollow Cooperative: taxonomy,
 * postings with mentions, monthly demand, fitted curves with forecast bands, coverage, courses,
 * plan outputs, candidate terms, runs and events. Used by the route, XSS and browser tests and by
 * bench/server.ts (which asks for thousands of extra skills). Rows that other stages' modules can
 * write are written through those modules; the rest is inserted here, for tests only.
 */
import { parseConfig, type Config } from '../../src/config.ts'
import type { Db } from '../../src/db/connection.ts'
import { insertEvent } from '../../src/db/events.ts'
import { rebuildMentionLists } from '../../src/db/mention-lists.ts'
import { finishRun, startRun } from '../../src/db/runs.ts'
import { upsertCourses, upsertImportedAbilities, upsertPeople, upsertRoles } from '../../src/db/workforce.ts'
import { runPlan } from '../../src/plan/stage.ts'

export interface FixtureOptions {
  /** extra generated skills beyond the named ones (for scale tests and benchmarks) */
  extraSkills?: number
  months?: number
  /** postings per month stored as documents */
  postingsPerMonth?: number
  /** titles/bodies to use for some postings mentioning `kubernetes` (XSS tests) */
  hostilePostings?: { title: string; body: string }[]
  /** run the real plan stage over the fixture (default true) */
  plan?: boolean
  config?: Config
}

export interface NamedSkill {
  id: string
  label: string
  type: 'hard' | 'soft'
  state: 'emerging' | 'rising' | 'steady' | 'declining' | 'fading'
  base: number
  growth: number
}

export const NAMED_SKILLS: readonly NamedSkill[] = [
  { id: 'kubernetes', label: 'Kubernetes', type: 'hard', state: 'rising', base: 0.06, growth: 0.35 },
  { id: 'prompt-engineering', label: 'Prompt engineering', type: 'hard', state: 'emerging', base: 0.005, growth: 2.5 },
  { id: 'python', label: 'Python', type: 'hard', state: 'steady', base: 0.18, growth: 0.01 },
  { id: 'cobol', label: 'COBOL', type: 'hard', state: 'declining', base: 0.03, growth: -0.3 },
  { id: 'adobe-flash', label: 'Adobe Flash', type: 'hard', state: 'fading', base: 0.02, growth: -0.55 },
  { id: 'negotiation', label: 'Negotiation', type: 'soft', state: 'steady', base: 0.06, growth: 0 },
  { id: 'terraform', label: 'Terraform', type: 'hard', state: 'rising', base: 0.04, growth: 0.4 },
  { id: 'stakeholder-management', label: 'Stakeholder management', type: 'soft', state: 'rising', base: 0.05, growth: 0.2 },
]

/** Mulberry32: a tiny seeded generator so fixtures are the same on every run. */
function rng(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

export function monthList(n: number, start = '2023-01'): string[] {
  const [y0, m0] = start.split('-').map(Number) as [number, number]
  return Array.from({ length: n }, (_, i) => {
    const t = (y0 * 12 + (m0 - 1)) + i
    return `${Math.floor(t / 12)}-${String((t % 12) + 1).padStart(2, '0')}`
  })
}

/** Fills an empty, migrated database with the fixture; returns the months used. */
export function buildFixture(db: Db, opts: FixtureOptions = {}): { months: string[]; skills: string[] } {
  const months = monthList(opts.months ?? 24)
  const perMonth = opts.postingsPerMonth ?? 6
  const random = rng(42)
  const skills: NamedSkill[] = [...NAMED_SKILLS]
  const states = ['emerging', 'rising', 'steady', 'declining', 'fading'] as const
  for (let i = 0; i < (opts.extraSkills ?? 0); i++) {
    const state = states[i % states.length]!
    const growth = state === 'emerging' ? 1.5 : state === 'rising' ? 0.3 : state === 'steady' ? 0 : state === 'declining' ? -0.25 : -0.5
    skills.push({ id: `skill-${String(i).padStart(5, '0')}`, label: `Generated skill ${i}`, type: i % 4 === 0 ? 'soft' : 'hard', state, base: 0.002 + random() * 0.05, growth })
  }
  const now = '2025-01-15T10:00:00.000Z'
  const fill = db.transaction(() => {
    db.prepare("INSERT INTO sources(id, kind, location, schedule) VALUES ('fernhollow-board', 'feed', 'http://127.0.0.1:4780/feeds/board.rss?key=secret', '0 * * * *')").run()
    db.prepare("INSERT INTO sources(id, kind, location) VALUES ('learning-requests', 'requests', 'requests.csv')").run()
    const concept = db.prepare('INSERT INTO concepts(id, pref_label, type) VALUES (?, ?, ?)')
    const label = db.prepare('INSERT INTO labels(concept_id, label, kind) VALUES (?, ?, ?)')
    // the demand aggregates the map stage keeps: counts where non-zero, documents per month
    const insertCount = db.prepare('INSERT INTO demand_counts(concept_id, series, month, n) VALUES (?, ?, ?, ?)')
    const demand = { run: (id: string, series: string, month: string, n: number) => n > 0 && insertCount.run(id, series, month, n) }
    const totals = db.prepare('INSERT OR REPLACE INTO demand_totals(series, month, total) VALUES (?, ?, ?)')
    const curve = db.prepare(
      `INSERT INTO curves(concept_id, state, annual_growth, growth_low, growth_high, half_life_months, half_life_low, half_life_high, p_value, p_adjusted,
        latest_share, forecast_share12, forecast_method, change_month, emerged_month, details_json, fitted_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`,
    )
    const total = 400
    const forecastMonths = monthList(12, nextMonth(months[months.length - 1]!))
    for (const m of months) {
      totals.run('external', m, total)
      totals.run('internal', m, 120)
    }
    skills.forEach((s, idx) => {
      concept.run(s.id, s.label, s.type)
      label.run(s.id, s.label, 'pref')
      const rate = Math.log1p(s.growth) / 12
      const shares = months.map((_, i) => Math.max(0, s.base * Math.exp(rate * i) * (1 + (random() - 0.5) * 0.1)))
      months.forEach((m, i) => {
        demand.run(s.id, 'external', m, Math.round(shares[i]! * total))
        if (idx < NAMED_SKILLS.length) demand.run(s.id, 'internal', m, Math.round(shares[i]! * 0.8 * 120))
      })
      const fitted = months.map((_, i) => s.base * Math.exp(rate * i))
      const last = fitted[fitted.length - 1]!
      const forecast = forecastMonths.map((m, h) => {
        const mean = last * Math.exp(rate * (h + 1))
        const w = 0.08 * Math.sqrt(h + 1)
        const lo95 = mean * (1 - 1.53 * w)
        const hi95 = mean * (1 + 1.53 * w)
        return { month: m, monthsAhead: h + 1, mean, lo80: mean * (1 - w), hi80: mean * (1 + w), lo95, hi95, low: lo95, high: hi95 }
      })
      const declining = s.growth < 0
      const halfLife = declining ? Math.log(2) / -rate : null
      curve.run(
        s.id, s.state, s.growth, s.growth - 0.1, s.growth + 0.1, halfLife, halfLife ? halfLife * 0.7 : null, halfLife ? halfLife * 1.5 : null,
        0.001, s.state === 'steady' ? 0.4 : 0.004, shares[shares.length - 1]!, forecast[11]!.mean, 'damped trend',
        s.id === 'cobol' ? months[10]! : null, s.state === 'emerging' ? months[6]! : null,
        JSON.stringify({
          model: 'log-linear',
          fitted: { months, values: fitted },
          // the combined index of postings and requests (as the curves stage stores it) differs a little from the postings share
          combined: { months, values: shares.map((v) => v * 0.94) },
          forecast,
          tests: [{ name: 'Mann-Kendall', statistic: 3.1, p: 0.002, pAdjusted: 0.004, text: 'the combined index rises month over month more often than chance allows' }],
          stateReason: `planted ${s.state} shape`,
        }),
        now,
      )
    })
    label.run('kubernetes', 'K8s', 'alt')

    // postings with mentions
    const doc = db.prepare(
      "INSERT INTO documents(source_id, external_id, kind, title, body, posted_at, month, text_hash, organisation) VALUES ('fernhollow-board', ?, 'posting', ?, ?, ?, ?, ?, 'Fernhollow Cooperative')",
    )
    const mention = db.prepare("INSERT INTO mentions(document_id, concept_id, count, via) VALUES (?, ?, 1, 'text')")
    let n = 0
    const hostile = opts.hostilePostings ?? []
    months.forEach((m) => {
      for (let j = 0; j < perMonth; j++) {
        n++
        const a = NAMED_SKILLS[n % NAMED_SKILLS.length]!
        const b = NAMED_SKILLS[(n * 3 + 1) % NAMED_SKILLS.length]!
        const h = hostile.length && a.id === 'kubernetes' ? hostile[n % hostile.length]! : null
        const title = h?.title ?? `${a.label} specialist (${m})`
        const body = h?.body ?? `Fernhollow Cooperative is hiring. You bring ${a.label} and ${b.label}; we bring a friendly team.`
        const id = Number(doc.run(`post-${n}`, title, body, `${m}-${String((j % 27) + 1).padStart(2, '0')}T09:00:00Z`, m, `h${n}`).lastInsertRowid)
        mention.run(id, a.id)
        if (b.id !== a.id) mention.run(id, b.id)
      }
    })
    // each posting's row of mention_lists, as the map stage keeps it (the plan's adjacency reads them)
    rebuildMentionLists(db)

    // coverage: one large role, one role under the minimum group size
    const cov = db.prepare(
      `INSERT INTO coverage(skill_id, role, required_theta, headcount, assessed, unknown, stale, expected_meeting, coverage, expected_gap, gap_low, gap_high, updated_at)
       VALUES (?, ?, ?, ?, ?, ?, 0, ?, ?, ?, ?, ?, ?)`,
    )
    cov.run('kubernetes', 'Platform engineer', 0.5, 14, 12, 2, 6.6, 0.55, 5.4, 3.1, 7.8, now)
    cov.run('kubernetes', 'Data steward', 0.2, 3, 3, 0, 2.1, 0.7, 0.9, 0.2, 2.0, now)
    cov.run('python', 'Data steward', 0.4, 9, 8, 1, 5.2, 0.65, 2.8, 1.2, 4.4, now)
    cov.run('cobol', 'Platform engineer', 0.3, 14, 11, 3, 8.1, 0.74, 2.9, 1.5, 4.6, now)

    // candidate terms
    const cand = db.prepare('INSERT INTO candidate_terms(term, score, recent_df, earlier_df, trend_json, examples_json) VALUES (?, ?, ?, ?, ?, ?)')
    cand.run('agent orchestration', 8.2, 34, 2, JSON.stringify([0, 0, 1, 1, 3, 5, 8, 12]), JSON.stringify(['Build agent orchestration for our member services', 'Experience with agent orchestration frameworks']))
    cand.run('kube', 5.1, 20, 9, JSON.stringify([2, 3, 2, 4, 5, 6, 7, 8]), JSON.stringify(['Run kube clusters at Fernhollow']))
    cand.run('synergy', 1.2, 10, 9, JSON.stringify([3, 2, 3, 2, 3, 2, 3, 3]), JSON.stringify(['Create synergy across teams']))
  })
  fill()

  upsertPeople(db, [
    ...Array.from({ length: 14 }, (_, i) => ({ person_id: `p${i}`, role: 'Platform engineer', team: 'Infrastructure' })),
    ...Array.from({ length: 9 }, (_, i) => ({ person_id: `d${i}`, role: 'Data steward', team: 'Member data' })),
  ])
  upsertRoles(db, [
    { role: 'Platform engineer', skill_id: 'kubernetes', required_theta: 0.5 },
    { role: 'Platform engineer', skill_id: 'cobol', required_theta: 0.3 },
    { role: 'Platform engineer', skill_id: 'terraform', required_theta: 0.4 },
    { role: 'Data steward', skill_id: 'python', required_theta: 0.4 },
    { role: 'Data steward', skill_id: 'kubernetes', required_theta: 0.2 },
  ])
  upsertCourses(db, [
    { course_id: 'c-flash-101', title: 'Animating with Adobe Flash', skills: ['adobe-flash'], last_reviewed: '2019-05-01', enrollments_12m: 4, enrollments_prev_12m: 10, owner: 'Imogen Reed' },
    { course_id: 'c-cobol-maint', title: 'Maintaining COBOL batch jobs', skills: ['cobol'], last_reviewed: '2022-02-01', enrollments_12m: 12, enrollments_prev_12m: 15, owner: 'Tomas Vell' },
    { course_id: 'c-k8s-basics', title: 'Kubernetes from the ground up', skills: ['kubernetes'], last_reviewed: '2024-09-01', enrollments_12m: 40, enrollments_prev_12m: 22, owner: 'Tomas Vell' },
  ])
  // abilities: platform engineers strong in COBOL, most without Kubernetes (reskilling candidates)
  upsertImportedAbilities(db, [
    ...Array.from({ length: 14 }, (_, i) => ({ person_id: `p${i}`, skill_id: 'cobol', theta: 0.8 + (i % 3) * 0.2, se: 0.3, assessed_at: '2024-11-01' })),
    ...Array.from({ length: 12 }, (_, i) => ({ person_id: `p${i}`, skill_id: 'kubernetes', theta: i < 4 ? 1.2 : -0.6, se: 0.3, assessed_at: '2024-11-01' })),
  ])

  const run1 = startRun(db, 'ingest', 'schedule', 'fernhollow-board')
  finishRun(db, run1, 'ok', { read: 30, new: 28, duplicate: 2, rejected: 0 })
  const run2 = startRun(db, 'ingest', 'manual', 'learning-requests')
  finishRun(db, run2, 'failed', {}, 'requests.csv:7: column timestamp: not a date')
  const run3 = startRun(db, 'fit', 'event:documents.mapped')
  finishRun(db, run3, 'ok', { skills: skills.length } as never)
  db.transaction(() => {
    const e1 = insertEvent(db, 'documents.ingested', { source: 'fernhollow-board', new: 28 })
    insertEvent(db, 'curves.fitted', { skills: skills.length })
    db.prepare("INSERT INTO webhook_deliveries(event_id, endpoint, status, attempts, last_error) VALUES (?, 'http://127.0.0.1:9/hook', 'failed', 3, 'connection refused')").run(e1)
  })()
  if (opts.plan !== false) runPlan(db, opts.config ?? parseConfig({}), new Date(now))
  return { months, skills: skills.map((s) => s.id) }
}

function nextMonth(m: string): string {
  return monthList(2, m)[1]!
}
