/**
 * @module server/pages/skill
 * One skill's evidence: the monthly share chart (observed external and internal series, fitted
 * curve, forecast with 80% and 95% bands, change point), growth and half-life with intervals, the
 * test results in plain words, coverage by role (aggregate, small groups hidden), skills mentioned
 * alongside, courses tied to it, and recent postings shown as text.
 * JSON twin: /api/skills/:id; each table also at /api/skills/:id/<table>[?format=csv].
 */
import type { Hono } from 'hono'
import { html } from 'hono/html'
import {
  broaderOf, coMentioned, conceptById, conceptLabels, coursesForSkill, coverageFor, curveFor, demandFor, examplePostings, planOutput,
} from '../../db/dashboard.ts'
import { csv, minGroup, wantsCsv, type Ctx, type Deps, type Env } from '../deps.ts'
import * as f from '../format.ts'
import { csvRows, dataTable, notice, page, stateMark, type Column, type Html } from '../layout.ts'
import { needNotes, parseJson, readCurveDetails, scoreParts, type ScorePartView, type TestResult } from '../payloads.ts'
import { skillCoverage, type CoverageFigure } from '../privacy.ts'
import { describeCurve, type CurveSummary } from './skill-words.ts'
import { curveRowDetails } from '../../curves/stored-series.ts'

export interface SkillChart {
  months: string[]
  external: (number | null)[]
  internal: (number | null)[]
  /** the combined demand index the curve is fitted to (null where not observed) */
  index: (number | null)[]
  fitted: (number | null)[]
  forecast: (number | null)[]
  lo80: (number | null)[]
  hi80: (number | null)[]
  lo95: (number | null)[]
  hi95: (number | null)[]
  /** documents behind each observed share */
  externalTotal: (number | null)[]
  internalTotal: (number | null)[]
  changeMonth: string | null
}

export interface SkillData {
  id: string
  label: string
  type: string
  origin: string
  altLabels: string[]
  broader: { id: string; label: string }[]
  curve: CurveSummary | null
  need: { rank: number | null; score: number | null; parts: Record<string, ScorePartView>; notes: string[] } | null
  words: string[]
  tests: TestResult[]
  chart: SkillChart
  coverage: CoverageFigure[]
  adjacent: { id: string; label: string; state: string | null; together: number; share: number }[]
  courses: { courseId: string; title: string; owner: string; lastReviewed: string | null; enrollments12m: number | null; inferred: boolean }[]
  postings: { title: string; text: string; postedAt: string; organisation: string | null; location: string | null; source: string }[]
  notes: string[]
}

function buildChart(deps: Deps, id: string, details: ReturnType<typeof readCurveDetails>, changeMonth: string | null): SkillChart {
  const points = demandFor(deps.db, [id])
  const ext = new Map<string, { n: number; total: number }>()
  const int = new Map<string, { n: number; total: number }>()
  for (const p of points) (p.series === 'external' ? ext : int).set(p.month, { n: p.n, total: p.total })
  const fitted = new Map<string, number | null>()
  details.fitted?.months.forEach((m, i) => fitted.set(m, details.fitted!.values[i] ?? null))
  const combined = new Map<string, number | null>()
  details.combined?.months.forEach((m, i) => combined.set(m, details.combined!.values[i] ?? null))
  const fc = details.forecast
  const fcIndex = new Map<string, number>()
  fc?.months.forEach((m, i) => fcIndex.set(m, i))
  const months = [...new Set([...ext.keys(), ...int.keys(), ...fitted.keys(), ...fcIndex.keys()])].sort()
  const at = (arr: (number | null)[] | undefined, m: string) => {
    const i = fcIndex.get(m)
    return i === undefined || !arr ? null : (arr[i] ?? null)
  }
  const share = (map: Map<string, { n: number; total: number }>, m: string) => {
    const v = map.get(m)
    return v && v.total > 0 ? v.n / v.total : null
  }
  return {
    months,
    external: months.map((m) => share(ext, m)),
    internal: months.map((m) => share(int, m)),
    index: months.map((m) => combined.get(m) ?? null),
    fitted: months.map((m) => fitted.get(m) ?? null),
    forecast: months.map((m) => at(fc?.mean, m)),
    lo80: months.map((m) => at(fc?.lo80, m)),
    hi80: months.map((m) => at(fc?.hi80, m)),
    lo95: months.map((m) => at(fc?.lo95, m)),
    hi95: months.map((m) => at(fc?.hi95, m)),
    externalTotal: months.map((m) => ext.get(m)?.total ?? null),
    internalTotal: months.map((m) => int.get(m)?.total ?? null),
    changeMonth,
  }
}

/** All data of the skill page, or null when the skill does not exist. */
export function buildSkill(deps: Deps, id: string): SkillData | null {
  const { db } = deps
  const concept = conceptById(db, id)
  if (!concept) return null
  const curveRow = curveFor(db, id)
  const details = readCurveDetails(curveRow ? curveRowDetails(curveRow) : null)
  const curve: CurveSummary | null = curveRow
    ? {
        state: curveRow.state, annualGrowth: curveRow.annual_growth, growthLow: curveRow.growth_low, growthHigh: curveRow.growth_high,
        halfLifeMonths: curveRow.half_life_months, halfLifeLow: curveRow.half_life_low, halfLifeHigh: curveRow.half_life_high,
        pValue: curveRow.p_value, pAdjusted: curveRow.p_adjusted, latestShare: curveRow.latest_share, forecastShare12: curveRow.forecast_share12,
        forecastMethod: curveRow.forecast_method, changeMonth: curveRow.change_month, emergedMonth: curveRow.emerged_month, fittedAt: curveRow.fitted_at,
        model: details.model,
      }
    : null
  const need = planOutput(db, 'need', id)
  const coverage = skillCoverage(coverageFor(db, [id]), minGroup(deps))
  const labels = conceptLabels(db, id)
  const notes: string[] = []
  if (!curve) notes.push('No curve for this skill yet: run `tides run fit`.')
  return {
    id: concept.id,
    label: concept.pref_label,
    type: concept.type,
    origin: concept.origin,
    altLabels: labels.filter((l) => l.kind === 'alt').map((l) => l.label),
    broader: broaderOf(db, id),
    curve,
    need: need ? { rank: need.rank, score: need.score, parts: scoreParts(parseJson(need.payload_json)), notes: needNotes(parseJson(need.payload_json)) } : null,
    words: curve ? [...describeCurve(curve, deps.config.curves.q), ...(details.stateReason ? [`Why this state: ${details.stateReason}`] : [])] : [],
    tests: details.tests,
    chart: buildChart(deps, id, details, curveRow?.change_month ?? null),
    coverage: coverage.total ? [...coverage.byRole, coverage.total] : coverage.byRole,
    adjacent: coMentioned(db, id).map((a) => ({ id: a.id, label: a.label, state: a.state, together: a.together, share: a.together / a.base })),
    courses: coursesForSkill(db, id).map((c) => ({
      courseId: c.course_id, title: c.title, owner: c.owner, lastReviewed: c.last_reviewed?.slice(0, 10) ?? null, enrollments12m: c.enrollments_12m, inferred: c.inferred === 1,
    })),
    postings: examplePostings(db, id).map((p) => ({
      title: p.title, text: excerpt(p.body), postedAt: p.posted_at, organisation: p.organisation, location: p.location, source: p.source_id,
    })),
    notes,
  }
}

/** The first ~300 characters of a text, cut at a word boundary. */
export function excerpt(text: string, max = 300): string {
  const t = text.replace(/\s+/g, ' ').trim()
  if (t.length <= max) return t
  const cut = t.slice(0, max)
  const space = cut.lastIndexOf(' ')
  return `${space > max * 0.6 ? cut.slice(0, space) : cut}…`
}

type Row<K extends keyof SkillData> = SkillData[K] extends (infer R)[] ? R : never

const SERIES_COLUMNS: Column<{ month: string; i: number; c: SkillChart }>[] = [
  { key: 'month', label: 'Month', value: (r) => r.month },
  { key: 'external', label: 'External share', numeric: true, value: (r) => r.c.external[r.i], cell: (r) => f.share(r.c.external[r.i]) },
  { key: 'externalTotal', label: 'Postings', numeric: true, value: (r) => r.c.externalTotal[r.i] },
  { key: 'internal', label: 'Internal share', numeric: true, value: (r) => r.c.internal[r.i], cell: (r) => f.share(r.c.internal[r.i]) },
  { key: 'internalTotal', label: 'Requests', numeric: true, value: (r) => r.c.internalTotal[r.i] },
  { key: 'index', label: 'Demand index', numeric: true, value: (r) => r.c.index[r.i], cell: (r) => f.share(r.c.index[r.i]) },
  { key: 'fitted', label: 'Fitted', numeric: true, value: (r) => r.c.fitted[r.i], cell: (r) => f.share(r.c.fitted[r.i]) },
  { key: 'forecast', label: 'Forecast', numeric: true, value: (r) => r.c.forecast[r.i], cell: (r) => f.share(r.c.forecast[r.i]) },
  { key: 'lo80', label: '80% low', numeric: true, value: (r) => r.c.lo80[r.i], cell: (r) => f.share(r.c.lo80[r.i]) },
  { key: 'hi80', label: '80% high', numeric: true, value: (r) => r.c.hi80[r.i], cell: (r) => f.share(r.c.hi80[r.i]) },
  { key: 'lo95', label: '95% low', numeric: true, value: (r) => r.c.lo95[r.i], cell: (r) => f.share(r.c.lo95[r.i]) },
  { key: 'hi95', label: '95% high', numeric: true, value: (r) => r.c.hi95[r.i], cell: (r) => f.share(r.c.hi95[r.i]) },
]

const COVERAGE_COLUMNS: Column<CoverageFigure>[] = [
  { key: 'role', label: 'Role', value: (r) => r.role ?? 'all roles', cell: (r) => (r.role === null ? html`<strong>all roles</strong>` : r.role) },
  { key: 'requiredTheta', label: 'Required θ', numeric: true, value: (r) => r.requiredTheta, cell: (r) => f.num(r.requiredTheta, 2) },
  { key: 'headcount', label: 'People in role', numeric: true, value: (r) => r.headcount, cell: (r) => (r.headcount === null ? 'hidden' : r.headcount) },
  { key: 'assessed', label: 'Assessed', numeric: true, value: (r) => r.assessed, cell: (r) => (r.assessed === null ? 'hidden' : r.assessed) },
  { key: 'coverage', label: 'Share of assessed expected to meet it', numeric: true, value: (r) => r.coverage, cell: (r) => (r.suppressed ? 'hidden' : f.share(r.coverage, 0)) },
  {
    key: 'gap', label: 'Expected gap among assessed, people (interval)', numeric: true, value: (r) => r.gap,
    cell: (r) => (r.suppressed ? 'hidden' : `${f.num(r.gap)} (${f.num(r.gapLow)} to ${f.num(r.gapHigh)})`),
  },
  { key: 'gapLow', label: 'Gap low', value: (r) => r.gapLow, csvOnly: true },
  { key: 'gapHigh', label: 'Gap high', value: (r) => r.gapHigh, csvOnly: true },
  { key: 'note', label: 'Note', value: (r) => r.note ?? '' },
]

const ADJACENT_COLUMNS: Column<Row<'adjacent'>>[] = [
  { key: 'label', label: 'Skill', value: (r) => r.label, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.id)}">${r.label}</a>` },
  { key: 'id', label: 'Id', value: (r) => r.id },
  { key: 'state', label: 'State', value: (r) => r.state ?? '', cell: (r) => stateMark(r.state) },
  { key: 'together', label: 'Postings with both', numeric: true, value: (r) => r.together },
  { key: 'share', label: 'Share of this skill’s postings', numeric: true, value: (r) => r.share, cell: (r) => f.share(r.share, 0) },
]

const COURSE_COLUMNS: Column<Row<'courses'>>[] = [
  { key: 'courseId', label: 'Course', value: (r) => r.courseId },
  { key: 'title', label: 'Title', value: (r) => r.title },
  { key: 'owner', label: 'Owner', value: (r) => r.owner },
  { key: 'lastReviewed', label: 'Last reviewed', value: (r) => r.lastReviewed ?? '' },
  { key: 'enrollments12m', label: 'Enrolments (12 months)', numeric: true, value: (r) => r.enrollments12m },
  { key: 'inferred', label: 'Tie', value: (r) => (r.inferred ? 'inferred from title' : 'tagged') },
]

const POSTING_COLUMNS: Column<Row<'postings'>>[] = [
  { key: 'postedAt', label: 'Posted', value: (r) => r.postedAt },
  { key: 'title', label: 'Title', value: (r) => r.title },
  { key: 'organisation', label: 'Organisation', value: (r) => r.organisation ?? '' },
  { key: 'location', label: 'Location', value: (r) => r.location ?? '' },
  { key: 'source', label: 'Source', value: (r) => r.source },
  { key: 'text', label: 'Text (excerpt)', value: (r) => r.text },
]

/** The skill page's tables by name, for the CSV routes. */
export const SKILL_TABLES = {
  series: (d: SkillData) => ({ rows: d.chart.months.map((month, i) => ({ month, i, c: d.chart })), columns: SERIES_COLUMNS }),
  coverage: (d: SkillData) => ({ rows: d.coverage, columns: COVERAGE_COLUMNS }),
  adjacent: (d: SkillData) => ({ rows: d.adjacent, columns: ADJACENT_COLUMNS }),
  courses: (d: SkillData) => ({ rows: d.courses, columns: COURSE_COLUMNS }),
  postings: (d: SkillData) => ({ rows: d.postings, columns: POSTING_COLUMNS }),
} as const
type TableName = keyof typeof SKILL_TABLES

function figures(d: SkillData): Html {
  const c = d.curve
  if (!c) return html``
  return html`<dl class="figures">
<div><dt>State</dt><dd>${stateMark(c.state)}</dd></div>
<div><dt>Growth</dt><dd>${f.growth(c.annualGrowth)}<br><small>95%: ${f.interval(c.growthLow, c.growthHigh, f.signedPct)}</small></dd></div>
<div><dt>Half-life</dt><dd>${c.halfLifeMonths === null ? 'not declining' : f.months(c.halfLifeMonths)}${c.halfLifeMonths === null ? '' : html`<br><small>95%: ${f.interval(c.halfLifeLow, c.halfLifeHigh, f.months)}</small>`}</dd></div>
<div><dt>Share now</dt><dd>${f.share(c.latestShare)}</dd></div>
<div><dt>Forecast, 12 months</dt><dd>${f.share(c.forecastShare12)}${c.forecastMethod ? html`<br><small>${c.forecastMethod}</small>` : ''}</dd></div>
${d.need ? html`<div><dt>Need rank</dt><dd>${d.need.rank ?? '–'} (score ${f.num(d.need.score, 3)})</dd></div>` : ''}
</dl>`
}

function chartSection(d: SkillData): Html {
  const t = SKILL_TABLES.series(d)
  const base = `/api/skills/${encodeURIComponent(d.id)}`
  return html`<section aria-labelledby="chart-h"><h2 id="chart-h">Monthly share of demand</h2>
<figure class="chart">
<div id="demand-chart" class="chart-box" data-src="${base}/series" role="img" aria-label="Chart of ${d.label}: monthly share of postings and requests, fitted curve and forecast with 80% and 95% bands. The same numbers are in the table below."></div>
<figcaption>Dots: share of external postings (filled, left axis) and of internal requests (hollow, right axis) that mention the skill; small dark dots: the demand index the curve is fitted to, when it differs from the postings share${d.curve?.model ? ` (${d.curve.model})` : ''}. Line: fitted curve. Dashed: forecast, shaded 80% (darker) and 95% (lighter) bands.${d.chart.changeMonth ? ` Vertical mark: change after ${f.month(d.chart.changeMonth)}.` : ''}</figcaption>
</figure>
<details><summary>The chart's numbers as a table</summary>
${dataTable({ id: 'series', caption: 'Monthly series', columns: t.columns, rows: t.rows, csv: `${base}/series?format=csv`, empty: 'No monthly demand recorded yet: run `tides run map`.' })}
</details></section>`
}

function needSection(n: NonNullable<SkillData['need']>): Html {
  const parts = Object.entries(n.parts)
  return html`<section aria-labelledby="need-h"><h2 id="need-h">Why it ranks ${n.rank ?? '–'}</h2>
<p>Need score ${f.num(n.score, 3)} = the sum of its parts (value × weight):</p>
<ul class="words">${parts.map(([k, v]) => html`<li><strong>${k}</strong>: ${f.num(v.value, 3)} × ${f.num(v.weight, 2)} = ${f.num(v.contribution, 3)}</li>`)}</ul>
${n.notes.length ? html`<p class="muted">${n.notes.join('; ')}</p>` : ''}</section>`
}

export function renderSkill(c: Ctx, d: SkillData): Html {
  const base = `/api/skills/${encodeURIComponent(d.id)}`
  const table = (name: TableName, caption: string, empty: string) => {
    const t = SKILL_TABLES[name](d) as { rows: readonly unknown[]; columns: readonly Column<unknown>[] }
    return dataTable({ id: name, caption, columns: t.columns, rows: t.rows, csv: `${base}/${name}?format=csv`, empty })
  }
  const body = html`<p class="lede">${d.type} skill${d.altLabels.length ? html` · also called ${d.altLabels.join(', ')}` : ''}${d.broader.length
    ? html` · part of ${d.broader.map((b, i) => html`${i ? ', ' : ''}<a href="/skills/${encodeURIComponent(b.id)}">${b.label}</a>`)}`
    : ''}</p>
${d.notes.map((n) => notice('warn', n))}
${figures(d)}
${chartSection(d)}
${d.need ? needSection(d.need) : ''}
<section aria-labelledby="words-h"><h2 id="words-h">What the tests say</h2>
${d.words.length ? html`<ul class="words">${d.words.map((w) => html`<li>${w}</li>`)}</ul>` : html`<p class="empty">No fit yet.</p>`}
${d.tests.length ? html`<ul class="tests">${d.tests.map((t) => html`<li><strong>${t.name}</strong>: ${t.text ? `${t.text}; ` : ''}${t.statistic !== null ? `statistic ${f.num(t.statistic, 3)}, ` : ''}p ${f.pValue(t.p)}${t.pAdjusted !== null ? `, adjusted ${f.pValue(t.pAdjusted)}` : ''}</li>`)}</ul>` : ''}
</section>
<section aria-labelledby="cov-h"><h2 id="cov-h">Coverage by role</h2>
${table('coverage', 'Coverage by role (aggregate; small groups hidden)', 'No roles require this skill, or abilities are not estimated yet: run `tides run ability`.')}</section>
<section aria-labelledby="adj-h"><h2 id="adj-h">Skills asked for alongside</h2>
${table('adjacent', 'Skills mentioned in the same postings', 'No postings mention this skill yet.')}</section>
<section aria-labelledby="courses-h"><h2 id="courses-h">Courses</h2>
${table('courses', 'Courses tied to this skill', 'No course is tied to this skill.')}</section>
<section aria-labelledby="post-h"><h2 id="post-h">Recent postings</h2>
${d.postings.length
    ? html`<ol class="postings">${d.postings.map((p) => html`<li><article><h3 class="posting-title">${p.title}</h3><p class="meta">${p.postedAt.slice(0, 10)} · ${p.organisation ?? 'organisation not given'} · source ${p.source}</p><p class="posting-text">${p.text}</p></article></li>`)}</ol>
<p class="download"><a href="${base}/postings?format=csv" download>Download “Recent postings” as CSV</a></p>`
    : html`<p class="empty">No postings mention this skill yet.</p>`}</section>`
  return page({ title: d.label, session: c.get('session'), path: c.req.path, body, charts: true, scripts: ['charts.js'], api: base })
}

export function mountSkill(app: Hono<Env>, deps: Deps): void {
  app.get('/skills/:id', (c) => {
    const d = buildSkill(deps, c.req.param('id'))
    if (!d) return c.notFound()
    return c.html(renderSkill(c, d))
  })
  app.get('/api/skills/:id', (c) => {
    const d = buildSkill(deps, c.req.param('id'))
    if (!d) return c.json({ error: `no skill with id "${c.req.param('id')}"` }, 404)
    return c.json(d)
  })
  app.get('/api/skills/:id/:table', (c) => {
    const name = c.req.param('table')
    if (!(name in SKILL_TABLES)) return c.json({ error: `no table "${name}" (tables: ${Object.keys(SKILL_TABLES).join(', ')})` }, 404)
    const d = buildSkill(deps, c.req.param('id'))
    if (!d) return c.json({ error: `no skill with id "${c.req.param('id')}"` }, 404)
    if (name === 'series' && !wantsCsv(c)) return c.json(d.chart)
    const t = SKILL_TABLES[name as TableName](d) as { rows: readonly unknown[]; columns: readonly Column<unknown>[] }
    const rows = csvRows(t.rows, t.columns)
    return wantsCsv(c) ? csv(c, `${d.id}-${name}`, rows, t.columns.map((col) => col.key)) : c.json(rows)
  })
}
