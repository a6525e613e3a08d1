/**
 * Plan stage benchmark (issue 7): one full `runPlan` on a synthetic organisation at demo scale and
 * beyond: 900 skills with curves, 100,000 postings over 24 months (about 6 skills each), 3,000
 * people in 15 roles with 8 requirements each, 60,000 abilities, 150 courses, 2,000 simulated paths
 * per forecast skill. Seeded; standalone: `npx tsx bench/plan.ts`.
 */
import { parseConfig } from '../src/config.ts'
import { openDb } from '../src/db/connection.ts'
import { rebuildDemandCounts } from '../src/db/curves.ts'
import { rebuildMentionLists } from '../src/db/mention-lists.ts'
import { upsertCourses, upsertImportedAbilities, upsertPeople, upsertRoles } from '../src/db/workforce.ts'
import { createRng } from '../src/plan/random.ts'
import { runPlan } from '../src/plan/stage.ts'
import { reportBench, type Figure } from './report.ts'

const rng = createRng(20260101)
const db = openDb(':memory:')
const SKILLS = 900
const POSTINGS = 100_000
const STATES = ['emerging', 'rising', 'steady', 'steady', 'steady', 'declining', 'fading', 'insufficient-evidence']
const ids = Array.from({ length: SKILLS }, (_, i) => `skill-${i}`)
const months = Array.from({ length: 24 }, (_, i) => `${2024 + Math.floor(i / 12)}-${String((i % 12) + 1).padStart(2, '0')}`)

const t0 = performance.now()
db.transaction(() => {
  const concept = db.prepare("INSERT INTO concepts(id, pref_label, type) VALUES (?, ?, 'hard')")
  const label = db.prepare("INSERT INTO labels(concept_id, label, kind) VALUES (?, ?, 'pref')")
  const curve = db.prepare(
    `INSERT INTO curves(concept_id, state, annual_growth, growth_low, growth_high, half_life_months, half_life_low, half_life_high, p_adjusted, latest_share, forecast_share12, details_json, fitted_at)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, '{}', '2026-01-01')`,
  )
  ids.forEach((id, i) => {
    concept.run(id, `Skill ${i}`)
    label.run(id, `Skill ${i}`)
    const state = STATES[i % STATES.length]!
    const g = state === 'emerging' ? 2 : state === 'rising' ? 0.3 : state === 'declining' ? -0.2 : state === 'fading' ? -0.45 : 0
    const h = g < 0 ? (12 * Math.log(2)) / -Math.log(1 + g) : null
    const share = 0.001 + rng.uniform() * 0.05
    curve.run(id, state, g, g - 0.1, g + 0.1, h, h ? h * 0.8 : null, h ? h * 1.25 : null, 0.01, state === 'insufficient-evidence' ? null : share, state === 'insufficient-evidence' ? null : share * (1 + g))
  })
  db.prepare("INSERT INTO sources(id, kind, location) VALUES ('bench', 'import', 'bench')").run()
  const doc = db.prepare("INSERT INTO documents(source_id, external_id, kind, title, posted_at, month, text_hash, occupation) VALUES ('bench', ?, 'posting', ?, ?, ?, ?, ?)")
  const mention = db.prepare("INSERT OR IGNORE INTO mentions(document_id, concept_id, count, via) VALUES (?, ?, 1, 'text')")
  for (let d = 0; d < POSTINGS; d++) {
    const month = months[Math.floor((d / POSTINGS) * months.length)]!
    const role = `Role ${d % 15}`
    const id = Number(doc.run(`p${d}`, role, `${month}-10`, month, `h${d}`, role).lastInsertRowid)
    // skills cluster by role so that adjacency has structure
    for (let k = 0; k < 6; k++) mention.run(id, ids[((d % 15) * 60 + Math.floor(rng.uniform() * 120)) % SKILLS]!)
  }
  // the documents' concept lists and the demand aggregates with their month versions, as the map stage keeps them
  rebuildMentionLists(db)
  rebuildDemandCounts(db)
  for (let r = 0; r < 15; r++) {
    const people = Array.from({ length: 200 }, (_, i) => ({ person_id: `r${r}-p${i}`, role: `Role ${r}`, team: '' }))
    upsertPeople(db, people)
    const reqs = Array.from({ length: 8 }, (_, k) => ids[(r * 60 + k * 7) % SKILLS]!)
    upsertRoles(db, reqs.map((skill_id) => ({ role: `Role ${r}`, skill_id, required_theta: 0.3 })))
    const abilities = people.flatMap((p) => reqs.concat(ids.slice((r * 60 + 100) % SKILLS, (r * 60 + 112) % SKILLS)).slice(0, 20).map((skill_id) => ({ person_id: p.person_id, skill_id, theta: rng.normal(), se: 0.3, assessed_at: '2025-06-01' })))
    upsertImportedAbilities(db, abilities)
    const cov = db.prepare("INSERT OR REPLACE INTO coverage(skill_id, role, required_theta, headcount, assessed, unknown, expected_meeting, coverage, expected_gap, gap_low, gap_high, updated_at) VALUES (?, ?, 0.3, 200, 180, 20, 90, 0.5, 90, 80, 100, '2026-01-01')")
    for (const s of reqs) cov.run(s, `Role ${r}`)
  }
  upsertCourses(db, Array.from({ length: 150 }, (_, c) => ({ course_id: `C${c}`, title: c % 10 === 0 ? `Practical Skill ${c % SKILLS}` : `Course ${c}`, skills: c % 10 === 0 ? [] : [ids[(c * 6) % SKILLS]!, ids[(c * 6 + 5) % SKILLS]!], last_reviewed: null, enrollments_12m: 40, enrollments_prev_12m: 50, owner: 'bench' })))
})()
const loadSeconds = (performance.now() - t0) / 1000

const config = parseConfig({ db: ':memory:' })
const t1 = performance.now()
const { result } = runPlan(db, config)
const planSeconds = (performance.now() - t1) / 1000

const figures: Figure[] = [
  { figure: 'synthetic load (900 skills, 100,000 postings, 3,000 people)', value: loadSeconds, unit: 's' },
  { figure: 'runPlan: compute and store every output', value: planSeconds, unit: 's', goal: '< 20 s', met: planSeconds < 20 },
  { figure: 'needs ranked', value: result.needs.length, unit: '' },
  { figure: 'course flags', value: result.courseFlags.length, unit: '' },
  { figure: 'role suggestions', value: result.suggestions.length, unit: '' },
  { figure: 'pathways', value: result.pathways.length, unit: '' },
  { figure: 'forecast skills x quarters', value: result.forecast.length, unit: 'rows' },
]
reportBench('plan', figures)
