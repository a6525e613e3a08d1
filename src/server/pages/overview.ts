/**
 * @module server/pages/overview
 * The needs overview: skills ranked by the plan's need score, filterable by role, team, skill type
 * and state, sortable by any column, paginated: an in-memory index (skill-index.ts) sorts and cuts
 * the page, so 20,000 skills cost a few milliseconds plus lookups for the rows shown. Each row carries a server-drawn
 * trend line, the state as shape and word, growth or half-life with interval, coverage and the
 * score's parts. JSON twin: /api/overview; CSV: /api/overview?format=csv (all matching rows).
 */
import type { Hono } from 'hono'
import { html } from 'hono/html'
import { overviewRowsByIds, roleAndTeamChoices, type OverviewDbRow } from '../../db/dashboard.ts'
import { latestRuns, type JobRun } from '../../db/runs.ts'
import { csv, intParam, minGroup, wantsCsv, withQuery, type Ctx, type Deps, type Env, type NextRun } from '../deps.ts'
import * as f from '../format.ts'
import { notice, page, stateMark, type Html } from '../layout.ts'
import { needNotes, parseJson, scoreParts, type ScorePartView } from '../payloads.ts'
import { figureFor, type CoverageFigure } from '../privacy.ts'
import { OVERVIEW_SORTS, skillIndex, type OverviewFilter, type OverviewSort } from '../skill-index.ts'
import { sparkline } from '../sparkline.ts'

export const PAGE_SIZES = [25, 50, 100, 200] as const
const CSV_MAX_ROWS = 100_000

export interface OverviewQuery extends OverviewFilter {
  sort: OverviewSort
  dir: 'asc' | 'desc'
  limit: number
  offset: number
}

export interface FilterChoices {
  roles: string[]
  teams: string[]
  types: string[]
  states: string[]
}

export interface NeedRow {
  rank: number | null
  id: string
  label: string
  type: string
  state: string | null
  annualGrowth: number | null
  growthInterval: [number | null, number | null] | null
  halfLifeMonths: number | null
  halfLifeInterval: [number | null, number | null] | null
  pAdjusted: number | null
  latestShare: number | null
  forecastShare12: number | null
  changeMonth: string | null
  coverage: CoverageFigure | null
  score: number | null
  parts: Record<string, ScorePartView>
  notes: string[]
  /** external share per month, oldest first */
  trend: (number | null)[]
}

export interface OverviewData {
  query: Omit<OverviewQuery, 'limit' | 'offset'> & { page: number; pageSize: number }
  total: number
  pages: number
  rows: NeedRow[]
  stateCounts: { state: string | null; count: number }[]
  choices: FilterChoices
  lastRun: JobRun | null
  latestRuns: JobRun[]
  nextRuns: NextRun[]
  notes: string[]
}

/** Reads and bounds the overview's query parameters; unknown values fall back to defaults. */
export function parseOverviewQuery(c: Ctx): OverviewQuery & { page: number; pageSize: number } {
  const sortParam = c.req.query('sort') ?? 'rank'
  const sort = (OVERVIEW_SORTS as readonly string[]).includes(sortParam) ? (sortParam as OverviewSort) : 'rank'
  const defaultDir = sort === 'rank' || sort === 'label' || sort === 'state' ? 'asc' : 'desc'
  const dir = c.req.query('dir') === 'asc' ? 'asc' : c.req.query('dir') === 'desc' ? 'desc' : defaultDir
  const size = intParam(c.req.query('size'), 50, 1, 200)
  const pageNo = intParam(c.req.query('page'), 1, 1, 1_000_000)
  const text = (name: string) => {
    const v = c.req.query(name)?.trim()
    return v ? v.slice(0, 200) : undefined
  }
  return {
    sort, dir, role: text('role'), team: text('team'), type: text('type'), state: text('state'), search: text('q'),
    limit: size, offset: (pageNo - 1) * size, page: pageNo, pageSize: size,
  }
}

function toNeed(r: OverviewDbRow, trend: (number | null)[], coverage: CoverageFigure | null): NeedRow {
  const pair = (a: number | null, b: number | null): [number | null, number | null] | null => (a === null && b === null ? null : [a, b])
  const payload = parseJson(r.payload_json)
  return {
    rank: r.rank, id: r.id, label: r.label, type: r.type, state: r.state,
    annualGrowth: r.annual_growth, growthInterval: pair(r.growth_low, r.growth_high),
    halfLifeMonths: r.half_life_months, halfLifeInterval: pair(r.half_life_low, r.half_life_high),
    pAdjusted: r.p_adjusted, latestShare: r.latest_share, forecastShare12: r.forecast_share12, changeMonth: r.change_month,
    coverage, score: r.score, parts: scoreParts(payload), notes: needNotes(payload), trend,
  }
}

/** The overview's data: one page of rows (or all matching rows for CSV, without trends). */
export function buildOverview(deps: Deps, q: OverviewQuery & { page: number; pageSize: number }, all = false): OverviewData {
  const { db } = deps
  const index = skillIndex(db, minGroup(deps), deps.graceMs)
  const { role, team, type, state, search } = q
  const selection = index.select({ role, team, type, state, search }, q.sort, q.dir, all ? 0 : q.offset, all ? CSV_MAX_ROWS : q.limit)
  const total = selection.total
  const rows: OverviewDbRow[] = overviewRowsByIds(db, selection.ids, q.role)
  const trends = all ? new Map<string, (number | null)[]>() : index.trends(rows.map((r) => r.id))
  const coverage = index.coverageFigures()
  const needRows = rows.map((r) => toNeed(r, trends.get(r.id) ?? [], figureFor(coverage.get(r.id), q.role)))
  const counts = index.stateCounts()
  const runs = latestRuns(db)
  const lastRun = runs.reduce<JobRun | null>((a, r) => (a === null || r.id > a.id ? r : a), null)
  const notes: string[] = []
  const totalSkills = counts.reduce((a, s) => a + s.count, 0)
  if (totalSkills === 0) notes.push('No taxonomy loaded yet: run `tides import taxonomy FILE` or `tides demo`.')
  else if (counts.every((s) => s.state === null)) notes.push('No curves yet: run `tides run fit`.')
  if (totalSkills > 0 && rows.length > 0 && rows.every((r) => r.rank === null)) notes.push('No needs ranking yet: run `tides run plan`.')
  const { limit: _l, offset: _o, ...shown } = q
  return {
    query: shown,
    total,
    pages: Math.max(1, Math.ceil(total / q.pageSize)),
    rows: needRows,
    stateCounts: counts,
    choices: { ...roleAndTeamChoices(db), types: index.types(), states: index.states() },
    lastRun,
    latestRuns: runs,
    nextRuns: deps.nextRuns(),
    notes,
  }
}

/** Flat rows for the CSV download: one column per score part present. */
export function overviewCsvRows(data: OverviewData): { rows: Record<string, unknown>[]; columns: string[] } {
  const partNames = [...new Set(data.rows.flatMap((r) => Object.keys(r.parts)))].sort()
  const columns = [
    'rank', 'id', 'label', 'type', 'state', 'annualGrowth', 'growthLow', 'growthHigh', 'halfLifeMonths', 'halfLifeLow', 'halfLifeHigh',
    'pAdjusted', 'latestShare', 'forecastShare12', 'changeMonth', 'coverage', 'gap', 'gapLow', 'gapHigh', 'coverageNote', 'score',
    ...partNames.flatMap((p) => [`${p}_value`, `${p}_weight`, `${p}_contribution`]), 'notes',
  ]
  const rows = data.rows.map((r) => ({
    rank: r.rank, id: r.id, label: r.label, type: r.type, state: r.state ?? '',
    annualGrowth: r.annualGrowth, growthLow: r.growthInterval?.[0] ?? null, growthHigh: r.growthInterval?.[1] ?? null,
    halfLifeMonths: r.halfLifeMonths, halfLifeLow: r.halfLifeInterval?.[0] ?? null, halfLifeHigh: r.halfLifeInterval?.[1] ?? null,
    pAdjusted: r.pAdjusted, latestShare: r.latestShare, forecastShare12: r.forecastShare12, changeMonth: r.changeMonth ?? '',
    coverage: r.coverage?.coverage ?? null, gap: r.coverage?.gap ?? null, gapLow: r.coverage?.gapLow ?? null, gapHigh: r.coverage?.gapHigh ?? null,
    coverageNote: r.coverage?.note ?? '', score: r.score,
    ...Object.fromEntries(
      partNames.flatMap((p) => [[`${p}_value`, r.parts[p]?.value ?? null], [`${p}_weight`, r.parts[p]?.weight ?? null], [`${p}_contribution`, r.parts[p]?.contribution ?? null]]),
    ),
    notes: r.notes.join('; '),
  }))
  return { rows, columns }
}

const COLUMNS: { key: OverviewSort | null; label: string; numeric?: boolean }[] = [
  { key: 'rank', label: 'Rank', numeric: true },
  { key: 'label', label: 'Skill' },
  { key: null, label: 'Trend' },
  { key: 'state', label: 'State' },
  { key: 'growth', label: 'Growth or half-life', numeric: true },
  { key: 'share', label: 'Share now → in 12 months', numeric: true },
  { key: 'coverage', label: 'Coverage', numeric: true },
  { key: 'score', label: 'Need score (parts)', numeric: true },
]

function growthCell(r: NeedRow): Html {
  const gi = r.growthInterval
  const growth = html`<span>${f.growth(r.annualGrowth)}</span>${gi ? html`<br><small>95%: ${f.interval(gi[0], gi[1], f.signedPct)}</small>` : ''}`
  if (r.halfLifeMonths === null) return growth
  const hi = r.halfLifeInterval
  return html`<span>half-life ${f.months(r.halfLifeMonths)}</span>${hi ? html`<br><small>95%: ${f.interval(hi[0], hi[1], f.months)}</small>` : ''}<br><small>${f.growth(r.annualGrowth)}</small>`
}

function coverageCell(cov: CoverageFigure | null): Html | string {
  if (!cov) return '–'
  if (cov.suppressed) return html`<span class="suppressed" title="${cov.note ?? ''}">hidden (small group)</span>`
  if (cov.coverage === null) return html`<span class="muted">nobody assessed</span>`
  return html`${f.share(cov.coverage, 0)}<br><small>gap ${f.num(cov.gap)} of ${cov.assessed} assessed (${f.num(cov.gapLow)} to ${f.num(cov.gapHigh)})</small>`
}

function partsCell(r: NeedRow): Html {
  const parts = Object.entries(r.parts)
  return html`<strong>${f.num(r.score, 3)}</strong>${parts.length
    ? html`<br><small class="parts">${parts.map(([k, v], i) => html`${i ? ' + ' : ''}<span title="value ${f.num(v.value, 3)} × weight ${f.num(v.weight, 2)}">${k} ${f.num(v.contribution, 3)}</span>`)}</small>`
    : ''}${r.notes.length ? html`<br><small class="muted">${r.notes.join('; ')}</small>` : ''}`
}

function header(c: Ctx, data: OverviewData): Html {
  return html`<tr>${COLUMNS.map((col) => {
    if (!col.key) return html`<th scope="col">${col.label}</th>`
    const current = data.query.sort === col.key
    const nextDir = current && data.query.dir === 'asc' ? 'desc' : current ? 'asc' : col.key === 'rank' || col.key === 'label' || col.key === 'state' ? 'asc' : 'desc'
    const aria = current ? (data.query.dir === 'asc' ? 'ascending' : 'descending') : null
    const arrow = current ? (data.query.dir === 'asc' ? ' ↑' : ' ↓') : ''
    return html`<th scope="col"${col.numeric ? html` class="num"` : ''}${aria ? html` aria-sort="${aria}"` : ''}><a href="${withQuery(c, { sort: col.key, dir: nextDir, page: null })}" data-sort="${col.key}">${col.label}${arrow}</a></th>`
  })}</tr>`
}

function select(name: string, label: string, values: readonly string[], current: string | undefined, extra: [string, string][] = []): Html {
  return html`<label>${label} <select name="${name}"><option value="">all</option>${extra.map(([v, t]) => html`<option value="${v}"${current === v ? html` selected` : ''}>${t}</option>`)}${values.map(
    (v) => html`<option value="${v}"${current === v ? html` selected` : ''}>${v}</option>`,
  )}</select></label>`
}

function filters(data: OverviewData): Html {
  const q = data.query
  return html`<form class="filters" method="get" action="/" role="search" aria-label="Filter skills">
  ${select('role', 'Role', data.choices.roles, q.role)}
  ${select('team', 'Team', data.choices.teams, q.team)}
  ${select('type', 'Skill type', data.choices.types, q.type)}
  ${select('state', 'State', data.choices.states, q.state, [['none', 'not fitted']])}
  <label>Search <input type="search" name="q" value="${q.search ?? ''}" maxlength="200"></label>
  <input type="hidden" name="sort" value="${q.sort}"><input type="hidden" name="dir" value="${q.dir}">
  <label>Rows <select name="size">${PAGE_SIZES.map((s) => html`<option${s === q.pageSize ? html` selected` : ''}>${s}</option>`)}</select></label>
  <button type="submit">Apply</button> <a href="/">Clear</a>
</form>`
}

function pager(c: Ctx, data: OverviewData): Html {
  const p = data.query.page
  return html`<nav class="pager" aria-label="Pages"><span>Page ${p} of ${data.pages} · ${data.total} skills</span>
  ${p > 1 ? html` <a rel="prev" href="${withQuery(c, { page: p - 1 })}">← previous</a>` : ''}
  ${p < data.pages ? html` <a rel="next" href="${withQuery(c, { page: p + 1 })}">next →</a>` : ''}</nav>`
}

function summary(data: OverviewData): Html {
  return html`<section class="summary" aria-labelledby="states-h"><div><h2 id="states-h">Skills by state</h2>
<ul class="state-counts">${data.stateCounts.map((s) => html`<li>${stateMark(s.state)} <strong>${s.count}</strong></li>`)}</ul>
<p class="download"><a href="/api/states?format=csv" download>Download counts as CSV</a></p></div>
<div class="runs-brief"><h2>Pipeline</h2>
<p>Last run: ${data.lastRun ? html`${data.lastRun.stage}${data.lastRun.source_id ? ` (${data.lastRun.source_id})` : ''}, ${data.lastRun.status}, ${f.when(data.lastRun.ended_at ?? data.lastRun.started_at)}` : 'none yet'}. <a href="/sources">All runs</a></p>
<div>Next scheduled: ${data.nextRuns.length ? html`<ul class="next-runs">${data.nextRuns.map((n) => html`<li>${n.name}: ${f.when(n.next)}</li>`)}</ul>` : 'no schedules running (start them with `tides serve`).'}</div></div>
</section>`
}

export function renderOverview(c: Ctx, data: OverviewData): Html {
  const csvHref = withQuery(c, { format: 'csv', page: null, size: null }, '/api/overview')
  const body = html`${data.notes.map((n) => notice('warn', n))}
${summary(data)}
<section aria-labelledby="needs-h"><h2 id="needs-h">Ranked needs</h2>
${filters(data)}
${data.rows.length === 0
  ? html`<p class="empty">No skills match these filters.</p>`
  : html`<table id="needs" class="needs">
<caption>Skills ranked by need (score = weighted parts)${data.query.role ? html`; ranks and scores within the role “${data.query.role}”` : ''}; trend is the monthly share of postings</caption>
<thead>${header(c, data)}</thead>
<tbody>${data.rows.map(
      (r) => html`<tr>
<td class="num">${r.rank ?? '–'}</td>
<td><a href="/skills/${encodeURIComponent(r.id)}">${r.label}</a><br><small>${r.type}</small></td>
<td>${sparkline(r.trend, r.label)}</td>
<td>${stateMark(r.state)}${r.changeMonth ? html`<br><small>changed ${f.month(r.changeMonth)}</small>` : ''}</td>
<td class="num">${growthCell(r)}</td>
<td class="num">${f.share(r.latestShare)} → ${f.share(r.forecastShare12)}</td>
<td class="num">${coverageCell(r.coverage)}</td>
<td class="num">${partsCell(r)}</td>
</tr>`,
    )}</tbody></table>`}
${pager(c, data)}
<p class="download"><a href="${csvHref}" download>Download all matching skills as CSV</a></p>
</section>`
  return page({ title: 'Needs overview', active: 'overview', session: c.get('session'), path: c.req.path, body, api: withQuery(c, {}, '/api/overview') })
}

export function mountOverview(app: Hono<Env>, deps: Deps): void {
  app.get('/', (c) => c.html(renderOverview(c, buildOverview(deps, parseOverviewQuery(c)))))
  app.get('/api/overview', (c) => {
    const q = parseOverviewQuery(c)
    if (wantsCsv(c)) {
      const { rows, columns } = overviewCsvRows(buildOverview(deps, q, true))
      return csv(c, 'skill-needs', rows, columns)
    }
    return c.json(buildOverview(deps, q))
  })
  app.get('/api/states', (c) => {
    const counts = skillIndex(deps.db, minGroup(deps), deps.graceMs).stateCounts().map((s) => ({ state: s.state ?? 'not fitted', count: s.count }))
    return wantsCsv(c) ? csv(c, 'skill-states', counts, ['state', 'count']) : c.json(counts)
  })
}
